package cnn

import (
	"math"
	"math/rand/v2"
	"slices"
	"sync"

	"telltale/corpus"
)

// workers runs one function over a partition of [0, n) on a fixed set of
// goroutines. Part k of the partition always goes to buffer index k, so a
// result depends only on n and the number of workers.
type workers struct {
	n  int
	ch chan task
	wg sync.WaitGroup
}

type task struct {
	fn        func(k, lo, hi int)
	k, lo, hi int
}

func newWorkers(n int) *workers {
	w := &workers{n: max(1, n)}
	if w.n > 1 {
		w.ch = make(chan task, w.n)
		for i := 1; i < w.n; i++ {
			go func() {
				for t := range w.ch {
					t.fn(t.k, t.lo, t.hi)
					w.wg.Done()
				}
			}()
		}
	}
	return w
}

// run calls fn(k, lo, hi) for the n parts of [0, size) and waits. Empty parts
// are skipped.
func (w *workers) run(size int, fn func(k, lo, hi int)) {
	if w.n == 1 {
		if size > 0 {
			fn(0, 0, size)
		}
		return
	}
	for k := 1; k < w.n; k++ {
		lo, hi := k*size/w.n, (k+1)*size/w.n
		if lo < hi {
			w.wg.Add(1)
			w.ch <- task{fn, k, lo, hi}
		}
	}
	if hi := size / w.n; hi > 0 {
		fn(0, 0, hi)
	}
	w.wg.Wait()
}

func (w *workers) close() {
	if w.ch != nil {
		close(w.ch)
	}
}

// threadBuf is one worker's scratch and gradient accumulators.
type threadBuf struct {
	w, b, ow, ob, emb []float32 // gradients: conv W (all banks), conv B, OutW, OutB, embeddings of the batch's words
	wide              []float32 // gradient of the batch's words' rows of Model.Wide (Config.Wide only)
	wideUNK           []float32 // gradient of UNK's row of Model.Wide from texts with no non-PAD id
	bigram            []float32 // gradient of the batch's bigrams' rows of Model.WideBigram (Config.WideBigrams only)
	h, z, p, dz       []float32
	dh                []float32
	wz                []float32  // the current text's wide term (TrainConfig.WideFitScale)
	dScale            float32    // gradient of the wide term's scale (TrainConfig.WideFitScale)
	rows              []*float32 // table rows of the current text's positions
	bestP             []float32  // windowMax scratch
	argP              []int32
}

// paramGroup is one trainable tensor with its gradient and optimizer state;
// decay marks the weights that weight decay shrinks (not the biases), head
// the output layer's (trained alone in the head warm-up), and steps counts
// the optimizer steps the group has taken (Adam's bias correction);
// lrMul multiplies the learning rate (0 means 1). A group with rows set
// is a table trained row-sparse (TrainConfig.WideSparse): *rows lists the
// table rows with gradient in the current step, row r being
// p[(r−first)·width:(r−first+1)·width] (first: the table rows left out of
// p in front, as the PAD row). rowLR, when set (TrainConfig.WideNBRate),
// holds a factor on the learning rate of each row of the table, row r's
// at rowLR[r−first] (then first and width are set as for rows).
type paramGroup struct {
	p, g, s1, s2 []float32
	decay, head  bool
	steps        int
	lrMul        float64
	extraDecay   float64 // TrainConfig.WideDecay on the wide tables, else 0
	rows         *[]int32
	first, width int
	rowLR        []float64
}

// trainer holds everything a training step needs, allocated once.
type trainer struct {
	m   *Model
	tc  TrainConfig
	wk  *workers
	sw  slotWeights
	ws  wordSet
	rng *rand.Rand

	// the current batch
	texts  [][]int32
	labels []int
	loc    []int32
	locOff []int
	emb    []float32
	tab    []float32
	pre    []float32
	arg    []int32
	drop   []float32 // per text and filter: 0 or 1/(1−p); nil for no dropout
	loss   []float64

	// embDrop is the embedding-dropout scale of each value of the batch's
	// word vectors (row i for ws.words[i]): 0 or 1/(1−p); empty for none.
	// It is drawn from embRng.
	embDrop []float32
	embRng  *rand.Rand

	// lr is the learning rate of the current epoch (TrainConfig.LRDecay);
	// headOnly is set during the head warm-up (TrainConfig.HeadWarmup).
	lr       float64
	headOnly bool

	// avg is the weights' moving average (TrainConfig.WeightAverage),
	// sampled after steps; nil when off.
	avg *weightAverage

	// classW is the loss weight of each class (nil: all 1); unkP the
	// word-dropout probability of each word id (nil: none), drawn from
	// wdRng into the batch copy wdBuf.
	classW []float32
	unkP   []float32
	wdRng  *rand.Rand
	wdBuf  []int32

	wOff  []int // offset of each bank in the flattened conv gradient
	th    []threadBuf
	gEmb  []float32 // full-size embedding gradient, zero outside the batch's rows
	gWide []float32 // full-size gradient of Model.Wide, zero outside the batch's rows
	gBig  []float32 // full-size gradient of Model.WideBigram, zero outside the batch's rows

	// wideOOF, when set (TrainConfig.WideFitFolds), holds each training
	// text's out-of-fold wide term (row i×Classes for text i of the split
	// prepared), which a step adds in place of the model's wide term;
	// batchIdx is the current batch's texts in that split. The word and
	// bigram weights then take no update (gWide and gBig stay nil).
	wideOOF  []float32
	batchIdx []int
	// scale (one value) multiplies the wide term in training when
	// TrainConfig.WideFitScale is set (nil otherwise); gScale is its
	// gradient. foldWideScale moves it into the word and bigram weights.
	scale, gScale []float32

	// wideRows are the rows of Model.Wide with gradient in the current
	// step: the batch's words, and UNK when a text has no word
	// (scatterWide fills it).
	wideRows []int32

	// The batch's bigrams (Config.WideBigrams): bs holds their rows of
	// Model.WideBigram, pairs the local index in bs of each found pair of
	// text i at pairs[pairOff[i]:pairOff[i+1]]. Pairs are found in orig,
	// the batch's texts before word dropout (when it has as many texts as
	// texts), and left out with probability bigramDrop, drawn from bdRng
	// (nil: none left out).
	orig       [][]int32
	bs         rowSet
	pairs      []int32
	pairOff    []int
	bigramDrop float64
	bdRng      *rand.Rand

	// prep holds the found pairs of every text of the split prepare was
	// given, looked up once; batchRows those of the current batch's texts
	// (step fills it when the batch comes from that split, collectPairs
	// consumes it; empty: collectPairs looks the pairs up).
	prep      pairIndex
	batchRows [][]int32

	groups []paramGroup
	cur    *paramGroup
	// wideGroup and bigramGroup index the word and bigram weight tables'
	// groups in groups (−1: none).
	wideGroup, bigramGroup int

	// ch is the character layer's part (nil for a model without one).
	ch *charTrain

	fnGather, fnTable, fnText, fnReduce, fnScatter, fnUnscatter, fnOpt func(k, lo, hi int)
	fnCharFwd, fnCharBwd                                               func(k, lo, hi int)
	fnEmbDrop, fnEmbDropGrad                                           func(k, lo, hi int)
}

// embGrad reports whether the step needs the gradient of the batch's word
// vectors: to train the word table, or the character layer behind them.
func (tr *trainer) embGrad() bool { return !tr.tc.FreezeEmb || tr.ch != nil }

func newTrainer(m *Model, tc TrainConfig) *trainer {
	cfg := m.Config
	d, nf := cfg.Dim, cfg.NumFilters()
	tr := &trainer{m: m, tc: tc, wk: newWorkers(tc.Threads), lr: tc.LR,
		rng: rand.New(rand.NewPCG(tc.Seed^0xa0761d6478bd642f, tc.Seed))} // dropout masks
	if tc.EmbedDropout > 0 {
		tr.embRng = rand.New(rand.NewPCG(tc.Seed^0x9e3779b97f4a7c15, tc.Seed))
	}
	total := 0
	for _, c := range m.Convs {
		tr.wOff = append(tr.wOff, total)
		total += len(c.W)
	}
	tr.th = make([]threadBuf, tr.wk.n)
	for k := range tr.th {
		t := &tr.th[k]
		t.w = make([]float32, total)
		t.b = make([]float32, nf)
		t.ow = make([]float32, len(m.OutW))
		t.ob = make([]float32, cfg.Classes)
		t.bestP = make([]float32, padLanes(cfg.Filters))
		t.argP = make([]int32, padLanes(cfg.Filters))
		t.h = make([]float32, nf)
		t.dh = make([]float32, nf)
		t.z = make([]float32, cfg.Classes)
		t.p = make([]float32, cfg.Classes)
		t.dz = make([]float32, cfg.Classes)
	}
	g0 := &tr.th[0]
	state := func(n int) []float32 { return make([]float32, n) }
	add := func(p, g []float32, decay bool) {
		tr.groups = append(tr.groups, paramGroup{p: p, g: g, s1: state(len(p)), s2: state(len(p)), decay: decay})
	}
	if !tc.FreezeEmb {
		tr.gEmb = make([]float32, len(m.Emb))
		add(m.Emb[d:], tr.gEmb[d:], true) // the PAD row is never trained
	}
	for b, c := range m.Convs {
		add(c.W, g0.w[tr.wOff[b]:tr.wOff[b]+len(c.W)], true)
		fo := b * cfg.Filters
		add(c.B, g0.b[fo:fo+cfg.Filters], false)
	}
	add(m.OutW, g0.ow, true)
	add(m.OutB, g0.ob, false)
	tr.groups[len(tr.groups)-1].head = true
	tr.groups[len(tr.groups)-2].head = true
	tr.addWideGroups(add)
	if m.Char != nil {
		tr.ch = newCharTrain(tr, add)
		tr.fnCharFwd = tr.charForwardRows
		tr.fnCharBwd = tr.charBackwardRows
	}
	tr.fnGather = tr.gather
	tr.fnTable = tr.table
	tr.fnText = tr.texts_
	tr.fnReduce = tr.reduce
	tr.fnScatter = tr.scatter
	tr.fnUnscatter = tr.unscatter
	tr.fnOpt = tr.opt
	tr.fnEmbDrop = func(_, lo, hi int) { scaleRows(tr.emb, tr.embDrop, lo*d, hi*d) }
	tr.fnEmbDropGrad = func(_, lo, hi int) { scaleRows(tr.th[0].emb, tr.embDrop, lo*d, hi*d) }
	tr.ws.init(cfg.VocabSize)
	return tr
}

// addWideGroups adds the optimizer groups of the word and bigram weights
// (Config.Wide, WideBigrams) through add, and sets up the bigrams' dropout.
func (tr *trainer) addWideGroups(add func(p, g []float32, decay bool)) {
	m, tc, cfg := tr.m, tr.tc, tr.m.Config
	tr.wideGroup, tr.bigramGroup = -1, -1
	held := tc.WideFit && (tc.WideFitFolds >= 2 || tc.WideFitScale)
	if held && tc.WideFitScale {
		tr.scale, tr.gScale = []float32{1}, []float32{0}
		add(tr.scale, tr.gScale, false)
	}
	if cfg.Wide && !held {
		// A weight like the embeddings (weight decay shrinks it); not part
		// of the head warm-up, and the PAD row is never trained.
		tr.gWide = make([]float32, len(m.Wide))
		add(m.Wide[cfg.Classes:], tr.gWide[cfg.Classes:], true)
		tr.wideGroup = len(tr.groups) - 1
		g := &tr.groups[tr.wideGroup]
		g.lrMul, g.extraDecay, g.first, g.width = tc.WideLR, tc.WideDecay, 1, cfg.Classes
		if tc.WideSparse {
			g.rows = &tr.wideRows
		}
	}
	if cfg.WideBigrams {
		if !held {
			// As the word weights: weight decay, the same factor on the rate.
			tr.gBig = make([]float32, len(m.WideBigram))
			add(m.WideBigram, tr.gBig, true)
			tr.bigramGroup = len(tr.groups) - 1
			g := &tr.groups[tr.bigramGroup]
			g.lrMul, g.extraDecay, g.width = tc.WideLR, tc.WideDecay, cfg.Classes
			if tc.WideSparse {
				g.rows = &tr.bs.rows
			}
		}
		tr.bs.init(len(m.Bigrams))
		if tc.TokenDropout > 0 {
			tr.bigramDrop = tc.TokenDropout
			tr.bdRng = rand.New(rand.NewPCG(tc.Seed^0x452821e638d01377, tc.Seed))
		}
	}
}

func (tr *trainer) close() { tr.wk.close() }

// prepare sets the class weights, word-dropout probabilities and the wide
// tables' per-row rate factors (TrainConfig.WideNBRate) that the training
// split d calls for, and looks up the bigrams of its texts once
// (Config.WideBigrams). Neither d nor the model's bigram set (SetBigrams)
// may change while steps are taken on d: the prepared rows index both.
func (tr *trainer) prepare(d Data) {
	cfg := tr.m.Config
	if cfg.WideBigrams {
		tr.prep.build(tr.m, d.IDs)
	}
	tr.setNBRates(d)
	if tr.tc.ClassWeight == "balanced" {
		n := make([]int, cfg.Classes)
		for _, y := range d.Labels {
			n[y]++
		}
		tr.classW = make([]float32, cfg.Classes)
		for c, nc := range n {
			if nc > 0 {
				tr.classW[c] = float32(float64(d.Len()) / float64(cfg.Classes*nc))
			}
		}
	}
	if a, q := tr.tc.WordDropout, tr.tc.TokenDropout; a > 0 || q > 0 {
		count := make([]int, cfg.VocabSize)
		for _, ids := range d.IDs {
			for _, id := range ids {
				count[id]++
			}
		}
		tr.unkP = make([]float32, cfg.VocabSize)
		for id := int(corpus.UNK) + 1; id < cfg.VocabSize; id++ {
			rare := 0.0
			if a > 0 {
				rare = a / (float64(count[id]) + a)
			}
			tr.unkP[id] = float32(1 - (1-q)*(1-rare))
		}
		tr.wdRng = rand.New(rand.NewPCG(tr.tc.Seed^0x243f6a8885a308d3, tr.tc.Seed))
	}
}

// dropWords replaces the batch's texts by copies in which each word is UNK
// with its word-dropout probability.
func (tr *trainer) dropWords() {
	total := 0
	for _, ids := range tr.texts {
		total += len(ids)
	}
	tr.wdBuf = grow(tr.wdBuf, total)
	off := 0
	for i, ids := range tr.texts {
		cp := tr.wdBuf[off : off+len(ids) : off+len(ids)]
		for j, id := range ids {
			if p := tr.unkP[id]; p > 0 && tr.wdRng.Float32() < p {
				id = corpus.UNK
			}
			cp[j] = id
		}
		tr.texts[i] = cp
		off += len(ids)
	}
}

// step trains on the items idx of d and returns the batch's mean loss.
func (tr *trainer) step(d Data, idx []int) float64 {
	tr.texts = tr.texts[:0]
	tr.labels = tr.labels[:0]
	for _, i := range idx {
		tr.texts = append(tr.texts, d.IDs[i])
		tr.labels = append(tr.labels, d.Labels[i])
	}
	tr.orig = append(tr.orig[:0], tr.texts...)
	tr.batchIdx = idx
	tr.batchRows = tr.prep.batch(d.IDs, idx, tr.batchRows[:0])
	if tr.unkP != nil {
		tr.dropWords()
	}
	nf := tr.m.Config.NumFilters()
	if p := tr.m.Config.Dropout; p > 0 {
		tr.drop = grow(tr.drop, len(idx)*nf)
		keep := 1 / (1 - p)
		for i := range tr.drop {
			if tr.rng.Float32() < p {
				tr.drop[i] = 0
			} else {
				tr.drop[i] = keep
			}
		}
	} else {
		tr.drop = tr.drop[:0]
	}
	loss := tr.forwardBackward()
	tr.update()
	if tr.avg != nil {
		tr.avg.step(tr.m)
	}
	return loss
}

// forwardBackward runs the batch in tr.texts/tr.labels with the dropout
// scales in tr.drop (empty: none) and leaves the batch-mean loss gradient in
// the groups' g slices (and tr.gEmb). It returns the mean loss.
func (tr *trainer) forwardBackward() float64 {
	m := tr.m
	cfg := m.Config
	d, nf := cfg.Dim, cfg.NumFilters()
	n := len(tr.texts)
	tr.sw.build(m)
	tr.ws.reset()
	tr.loc = tr.loc[:0]
	tr.locOff = append(tr.locOff[:0], 0)
	for _, ids := range tr.texts {
		for _, id := range ids {
			tr.loc = append(tr.loc, tr.ws.add(id))
		}
		tr.locOff = append(tr.locOff, len(tr.loc))
	}
	nw := len(tr.ws.words)
	if cfg.WideBigrams {
		tr.collectPairs()
	}
	tr.emb = grow(tr.emb, nw*d)
	tr.tab = grow(tr.tab, tableLen(&tr.sw, nw))
	tr.pre = grow(tr.pre, n*nf)
	tr.arg = grow(tr.arg, n*nf)
	tr.loss = grow(tr.loss, n)
	for k := range tr.th {
		t := &tr.th[k]
		clear(t.w)
		clear(t.b)
		clear(t.ow)
		clear(t.ob)
		if tr.embGrad() {
			t.emb = grow(t.emb, nw*d)
			clear(t.emb)
		}
		if cfg.WideBigrams {
			t.bigram = grow(t.bigram, len(tr.bs.rows)*cfg.Classes)
			clear(t.bigram)
		}
		if cfg.Wide {
			t.wide = grow(t.wide, nw*cfg.Classes)
			clear(t.wide)
			t.wideUNK = grow(t.wideUNK, cfg.Classes)
			clear(t.wideUNK)
		}
	}
	tr.wk.run(nw, tr.fnGather)
	if tr.ch != nil {
		tr.charPrepare()
		tr.wk.run(nw, tr.fnCharFwd)
	}
	tr.dropEmbeddings(nw * d)
	tr.wk.run(nw, tr.fnTable)
	tr.wk.run(n, tr.fnText)
	// Reduce the per-thread gradients into thread 0's, in thread order.
	if len(tr.th) > 1 {
		tr.wk.run(len(tr.th[0].w), tr.fnReduce)
	}
	if len(tr.embDrop) > 0 && tr.embGrad() {
		// The gradient of a raw word-vector value is its scale times that
		// of the scaled value the convolutions saw.
		tr.wk.run(nw, tr.fnEmbDropGrad)
	}
	if tr.ch != nil {
		tr.wk.run(nw, tr.fnCharBwd)
		tr.charReduce()
	}
	if !tr.tc.FreezeEmb {
		tr.wk.run(nw, tr.fnScatter)
	}
	tr.scatterWideGrads()
	var sum float64
	for _, l := range tr.loss[:n] {
		sum += l
	}
	return sum / float64(n)
}

func (tr *trainer) gather(_, lo, hi int) { gatherRows(tr.m, tr.ws.words, tr.emb, lo, hi) }

// dropEmbeddings draws the embedding-dropout scales of the batch's n
// word-vector values and applies them to tr.emb (dropout on the input
// layer, Srivastava et al. 2014, "Dropout: A Simple Way to Prevent Neural
// Networks from Overfitting", JMLR, inverted: kept values are scaled by
// 1/(1−p)). The mask belongs to a word of the batch, not to each of its
// occurrences, as in the word-type dropout of Gal & Ghahramani (2016, "A
// Theoretically Grounded Application of Dropout in Recurrent Neural
// Networks", NeurIPS) but elementwise: it keeps the step's one slot-table
// row per word. Without TrainConfig.EmbedDropout it draws nothing.
func (tr *trainer) dropEmbeddings(n int) {
	p := tr.tc.EmbedDropout
	if p <= 0 {
		tr.embDrop = tr.embDrop[:0]
		return
	}
	tr.embDrop = grow(tr.embDrop, n)
	keep := float32(1 / (1 - p))
	for i := range tr.embDrop {
		if tr.embRng.Float64() < p {
			tr.embDrop[i] = 0
		} else {
			tr.embDrop[i] = keep
		}
	}
	tr.wk.run(len(tr.ws.words), tr.fnEmbDrop)
}

// scaleRows multiplies x[lo:hi] by s[lo:hi] elementwise.
func scaleRows(x, s []float32, lo, hi int) {
	x, s = x[lo:hi], s[lo:hi]
	for i := range x {
		x[i] *= s[i]
	}
}

func (tr *trainer) table(_, lo, hi int) {
	tableRows(&tr.sw, tr.emb, tr.tab, tr.m.Config.Dim, lo, hi)
}

// texts_ runs forward and backward for texts lo..hi into buffer k.
func (tr *trainer) texts_(k, lo, hi int) {
	m := tr.m
	cfg := m.Config
	nf, C := cfg.NumFilters(), cfg.Classes
	maxW := cfg.MaxWidth()
	t := &tr.th[k]
	scale := 1 / float32(len(tr.texts))
	freeze := !tr.embGrad()
	for i := lo; i < hi; i++ {
		ids := tr.texts[i]
		loc := tr.loc[tr.locOff[i]:tr.locOff[i+1]]
		lp := max(len(ids), maxW)
		best, arg := tr.pre[i*nf:(i+1)*nf], tr.arg[i*nf:(i+1)*nf]
		resetBest(best, arg)
		t.rows = grow(t.rows, lp)
		for p := range t.rows {
			t.rows[p] = &tr.sw.zero[0]
			if p < len(loc) && loc[p] >= 0 {
				t.rows[p] = &tr.tab[int(loc[p])*tr.sw.nrows]
			}
		}
		scanRows(m, &tr.sw, tr.sw.bias, t.rows, lp, 0, lp, t.bestP, t.argP, best, arg)
		m.pool(best, t.h)
		var drop []float32
		if len(tr.drop) > 0 {
			drop = tr.drop[i*nf : (i+1)*nf]
			for g := range t.h {
				t.h[g] *= drop[g]
			}
		}
		m.Head(t.h, t.z)
		tr.wideTerm(t, i, ids)
		y := tr.labels[i]
		tr.loss[i] = crossEntropy(t.z, t.p, y)
		sc := scale
		if tr.classW != nil {
			sc *= tr.classW[y]
			tr.loss[i] *= float64(tr.classW[y])
		}
		for c := 0; c < C; c++ {
			t.dz[c] = t.p[c] * sc
		}
		t.dz[y] -= sc
		switch {
		case tr.scale != nil:
			for c, g := range t.dz[:C] {
				t.dScale += g * t.wz[c]
			}
		case tr.wideOOF == nil:
			wideGrad(ids, loc, tr.textPairs(i), t.dz, t.wide, t.wideUNK, t.bigram)
		}
		// Output layer.
		for c := 0; c < C; c++ {
			axpy(t.dz[c], t.h, t.ow[c*nf:(c+1)*nf])
			t.ob[c] += t.dz[c]
		}
		clear(t.dh)
		for c := 0; c < C; c++ {
			axpy(t.dz[c], m.OutW[c*nf:(c+1)*nf], t.dh)
		}
		tr.windowGrads(t, ids, loc, best, arg, drop, freeze)
	}
}

// windowGrads takes the pooled units' gradient t.dh of one text back
// through dropout (drop, nil for none), ReLU and the max: only the winning
// window (arg) of each filter that fired (best > 0) gets gradient, into the
// filter's weights and bias and, unless freeze, the word vectors it read.
func (tr *trainer) windowGrads(t *threadBuf, ids, loc []int32, best []float32, arg []int32, drop []float32, freeze bool) {
	m := tr.m
	d, F := m.Config.Dim, m.Config.Filters
	for g := range t.dh {
		gd := t.dh[g]
		if drop != nil {
			gd *= drop[g]
		}
		if gd == 0 || !(best[g] > 0) || m.IsMasked(g) {
			continue
		}
		b, f := g/F, g%F
		c := &m.Convs[b]
		w := c.Width
		t.b[g] += gd
		t0 := int(arg[g])
		for s := 0; s < w && t0+s < len(ids); s++ {
			li := loc[t0+s]
			if li < 0 {
				continue
			}
			wo := (f*w + s) * d
			axpy(gd, tr.emb[int(li)*d:int(li+1)*d], t.w[tr.wOff[b]+wo:tr.wOff[b]+wo+d])
			if !freeze {
				axpy(gd, c.W[wo:wo+d], t.emb[int(li)*d:int(li+1)*d])
			}
		}
	}
}

// wideGrad adds the gradient of the wide term of one text (ids, with
// their local indices loc, and the local indices pairs of its found
// bigrams) to wide, the rows of the batch's words, and big, the rows of
// the batch's bigrams: dz/(N+M) for each non-PAD occurrence and each of
// the M found pairs, N the number of non-PAD ids. A text with N = 0 is
// scored by UNK's row (Model.addWide), so its whole dz goes to unk
// instead, UNK's row gradient kept apart because UNK need not be one of
// the batch's words. An empty wide (no wide path) is left alone.
func wideGrad(ids, loc, pairs []int32, dz, wide, unk, big []float32) {
	if len(wide) == 0 && len(unk) == 0 {
		return
	}
	n := 0
	for _, id := range ids {
		if id != corpus.PAD {
			n++
		}
	}
	if n == 0 {
		addTo(unk, dz)
		return
	}
	inv, C := 1/float32(n+len(pairs)), len(dz)
	for p, id := range ids {
		if id == corpus.PAD {
			continue
		}
		li := int(loc[p])
		axpyRow(inv, dz, wide[li*C:li*C+C])
	}
	for _, li := range pairs {
		axpyRow(inv, dz, big[int(li)*C:int(li)*C+C])
	}
}

// crossEntropy writes softmax(z) into p and returns −log p[y], computed in
// float64 by log-sum-exp.
func crossEntropy(z, p []float32, y int) float64 {
	Softmax(z, p)
	mx := z[0]
	for _, v := range z[1:] {
		mx = max(mx, v)
	}
	var s float64
	for _, v := range z {
		s += math.Exp(float64(v - mx))
	}
	return math.Log(s) + float64(mx) - float64(z[y])
}

// reduce sums elements lo..hi of every thread's gradients into thread 0's,
// in thread order. Part of the work covers the small buffers and the
// embedding rows too, proportionally.
func (tr *trainer) reduce(_, lo, hi int) {
	sumInto := func(get func(t *threadBuf) []float32, lo, hi int) {
		dst := get(&tr.th[0])[lo:hi]
		for k := 1; k < len(tr.th); k++ {
			addTo(dst, get(&tr.th[k])[lo:hi])
		}
	}
	n := len(tr.th[0].w)
	sumInto(func(t *threadBuf) []float32 { return t.w }, lo, hi)
	part := func(m int) (int, int) { return lo * m / n, hi * m / n }
	a, b := part(len(tr.th[0].b))
	sumInto(func(t *threadBuf) []float32 { return t.b }, a, b)
	a, b = part(len(tr.th[0].ow))
	sumInto(func(t *threadBuf) []float32 { return t.ow }, a, b)
	a, b = part(len(tr.th[0].ob))
	sumInto(func(t *threadBuf) []float32 { return t.ob }, a, b)
	if tr.embGrad() {
		a, b = part(len(tr.th[0].emb))
		sumInto(func(t *threadBuf) []float32 { return t.emb }, a, b)
	}
	if tr.gWide != nil {
		a, b = part(len(tr.th[0].wide))
		sumInto(func(t *threadBuf) []float32 { return t.wide }, a, b)
	}
	if tr.gBig != nil {
		a, b = part(len(tr.th[0].bigram))
		sumInto(func(t *threadBuf) []float32 { return t.bigram }, a, b)
	}
}

// scatterWide copies the batch words' wide-table gradients into gWide and
// adds UNK's share from texts with no non-PAD id, summed in thread order.
// It lists the rows with gradient in tr.wideRows: the batch's words, and
// UNK when a text has no non-PAD id and UNK is not one of the words.
func (tr *trainer) scatterWide() {
	C := tr.m.Config.Classes
	for i, id := range tr.ws.words {
		copy(tr.gWide[int(id)*C:int(id)*C+C], tr.th[0].wide[i*C:i*C+C])
	}
	unk := tr.gWide[int(corpus.UNK)*C : int(corpus.UNK)*C+C]
	for k := range tr.th {
		addTo(unk, tr.th[k].wideUNK)
	}
	tr.wideRows = append(tr.wideRows[:0], tr.ws.words...)
	if tr.ws.local[corpus.UNK] < 0 && tr.hasWordless() {
		tr.wideRows = append(tr.wideRows, corpus.UNK)
	}
}

// hasWordless reports whether a text of the batch has no non-PAD id.
func (tr *trainer) hasWordless() bool {
	for _, ids := range tr.texts {
		if !slices.ContainsFunc(ids, func(id int32) bool { return id != corpus.PAD }) {
			return true
		}
	}
	return false
}

// unscatterWide zeroes the batch words' rows and UNK's row of gWide again.
func (tr *trainer) unscatterWide() {
	C := tr.m.Config.Classes
	for _, id := range tr.ws.words {
		clear(tr.gWide[int(id)*C : int(id)*C+C])
	}
	clear(tr.gWide[int(corpus.UNK)*C : int(corpus.UNK)*C+C])
}

// scatter copies the batch words' embedding gradients into gEmb: their
// word-table columns (a character part is trained through the character
// layer and stays zero in gEmb).
func (tr *trainer) scatter(_, lo, hi int) {
	d, wd := tr.m.Config.Dim, tr.m.Config.WordDim()
	for i := lo; i < hi; i++ {
		id := int(tr.ws.words[i])
		copy(tr.gEmb[id*d:id*d+wd], tr.th[0].emb[i*d:i*d+wd])
	}
}

// unscatter zeroes the batch words' rows of gEmb again.
func (tr *trainer) unscatter(_, lo, hi int) {
	d := tr.m.Config.Dim
	for i := lo; i < hi; i++ {
		id := int(tr.ws.words[i])
		clear(tr.gEmb[id*d : (id+1)*d])
	}
}

// update applies one optimizer step to every group (to the output layer's
// alone during the head warm-up), then the max-norm constraint.
func (tr *trainer) update() {
	for i := range tr.groups {
		if tr.headOnly && !tr.groups[i].head {
			continue
		}
		tr.cur = &tr.groups[i]
		tr.cur.steps++
		if tr.cur.rows != nil {
			tr.lazyAdam(tr.cur)
			continue
		}
		tr.wk.run(len(tr.cur.p), tr.fnOpt)
	}
	tr.cur = nil
	if !tr.tc.FreezeEmb {
		tr.wk.run(len(tr.ws.words), tr.fnUnscatter)
	}
	if tr.gWide != nil {
		tr.unscatterWide()
	}
	if tr.gBig != nil {
		tr.unscatterBigrams()
	}
	if s := tr.m.Config.MaxNorm; s > 0 {
		maxNormRows(tr.m.OutW, tr.m.Config.NumFilters(), s)
	}
}

func (tr *trainer) opt(_, lo, hi int) {
	g := tr.cur
	tc := tr.tc
	lr := tr.lr
	if g.lrMul > 0 {
		lr *= g.lrMul
	}
	decay := g.extraDecay
	if g.decay {
		decay += tc.WeightDecay
	}
	if decay > 0 {
		// Decoupled weight decay (Loshchilov & Hutter 2019), before the step
		// as torch.optim.AdamW does it; the wide tables' own (WideDecay)
		// adds to WeightDecay in the one factor.
		k := float32(1 - lr*decay)
		for i := range g.p[lo:hi] {
			g.p[lo+i] *= k
		}
	}
	if g.rowLR == nil {
		tr.optRange(g, lo, hi, lr)
		return
	}
	// A row's step at its own rate (TrainConfig.WideNBRate; its decay
	// above stays at the group's); a run of rows with one factor takes one
	// step.
	w := g.width
	for a := lo; a < hi; {
		f := g.rowLR[a/w]
		b := min(hi, (a/w+1)*w)
		for b < hi && g.rowLR[b/w] == f {
			b = min(hi, b+w)
		}
		tr.optRange(g, a, b, lr*f)
		a = b
	}
}

// optRange applies the optimizer's step at rate lr to elements lo..hi of
// group g.
func (tr *trainer) optRange(g *paramGroup, lo, hi int, lr float64) {
	tc := tr.tc
	if tc.Optimizer == "adadelta" {
		adadeltaUpdate(g.p[lo:hi], g.g[lo:hi], g.s1[lo:hi], g.s2[lo:hi], float32(lr), float32(tc.Rho), float32(tc.Eps))
		return
	}
	// Adam (Kingma & Ba 2015) in PyTorch's formulation; see adamStepGo.
	bc1 := 1 - math.Pow(tc.Beta1, float64(g.steps))
	bc2 := 1 - math.Pow(tc.Beta2, float64(g.steps))
	adamStep(g.p[lo:hi], g.g[lo:hi], g.s1[lo:hi], g.s2[lo:hi],
		float32(lr), float32(tc.Beta1), float32(tc.Beta2), float32(tc.Eps), float32(bc1), float32(bc2))
}

// lazyAdam applies torch.optim.SparseAdam's step (PyTorch,
// torch/optim/_functional.py, sparse_adam: "a lazy version of Adam") to
// the rows of group g with gradient in this step, *g.rows; the other rows
// keep their values and moments. g.steps counts every step of the group,
// as SparseAdam's one step count per parameter tensor (SparseAdam skips a
// tensor without gradient, so the counts part only after a batch that
// touches none of the table's rows, as one without a found pair). Each
// row must be listed once (SparseAdam coalesces its gradient first).
func (tr *trainer) lazyAdam(g *paramGroup) {
	tc := tr.tc
	lr := tr.lr
	if g.lrMul > 0 {
		lr *= g.lrMul
	}
	bc1 := 1 - math.Pow(tc.Beta1, float64(g.steps))
	bc2 := 1 - math.Pow(tc.Beta2, float64(g.steps))
	step := float32(lr * math.Sqrt(bc2) / bc1)
	w := g.width
	for _, r := range *g.rows {
		o := (int(r) - g.first) * w
		if g.rowLR != nil { // TrainConfig.WideNBRate
			step = float32(lr * g.rowLR[int(r)-g.first] * math.Sqrt(bc2) / bc1)
		}
		sparseAdamRow(g.p[o:o+w], g.g[o:o+w], g.s1[o:o+w], g.s2[o:o+w],
			float32(1-tc.Beta1), float32(1-tc.Beta2), float32(tc.Eps), step)
	}
}

// maxNormRows rescales every row (of n values) of w whose L2 norm exceeds s
// to norm s (Kim 2014, section 2.1).
func maxNormRows(w []float32, n int, s float32) {
	for r := 0; r+n <= len(w); r += n {
		row := w[r : r+n]
		var ss float64
		for _, v := range row {
			ss += float64(v) * float64(v)
		}
		if norm := math.Sqrt(ss); norm > float64(s) {
			k := float32(float64(s) / norm)
			for i := range row {
				row[i] *= k
			}
		}
	}
}
