package explain

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"telltale/corpus"
)

// TokenStat is the association of one vocabulary word with the labels of
// the training split, counted by document frequency (a text counts once per
// word however often the word occurs in it).
type TokenStat struct {
	ID    int32  `json:"id"`
	Token string `json:"token"`
	// Count is the number of training texts that contain the word.
	Count int `json:"count"`
	// PerClass[c] is the number of those texts with gold class c.
	PerClass []int `json:"per_class"`
	// Class is the dominant class: the one with the largest Z.
	Class int    `json:"class"`
	Label string `json:"label"`
	// Share is p̂(Class | word) = PerClass[Class]/Count.
	Share float64 `json:"share"`
	// Z[c] is the z-statistic of p̂(c|word) against the prior of c; Z is
	// the dominant class's, the largest.
	Zs []float64 `json:"z_per_class"`
	Z  float64   `json:"z"`
	// PMI[c] is the smoothed pointwise mutual information of the word with
	// class c (natural logarithm); PMI is the dominant class's.
	PMIs []float64 `json:"pmi_per_class"`
	PMI  float64   `json:"pmi"`
	// Flagged: Z exceeds the Bonferroni-corrected threshold.
	Flagged bool `json:"flagged"`
	// Category names the artifact category of the word (TokenCategory), or
	// is empty.
	Category string `json:"category,omitempty"`
}

// Association is the token–label association of a training split.
type Association struct {
	// Prior[c] is the class prior p0 each p̂(c|word) is tested against.
	Prior []float64 `json:"prior"`
	// PriorKind is "empirical" (class shares of the training texts) or
	// "uniform" (1/classes).
	PriorKind string  `json:"prior_kind"`
	Alpha     float64 `json:"alpha"`
	// Tested is the number of words tested (those in at least MinCount
	// texts, PAD and UNK excluded): the Bonferroni factor.
	Tested int `json:"tested"`
	// Threshold is the one-sided normal quantile z_{1−Alpha/Tested}.
	Threshold float64 `json:"threshold"`
	// Smoothing is the add-k constant of the PMI counts.
	Smoothing float64 `json:"smoothing"`
	// Stats holds every tested word, by id order; ByID maps a vocabulary id
	// to its index in Stats, or −1 when the word was not tested.
	Stats []TokenStat `json:"-"`
	ByID  []int32     `json:"-"`
}

// AssociationOptions controls Associate. Zero values select the defaults.
type AssociationOptions struct {
	// Alpha is the family-wise significance level (default 0.01).
	Alpha float64
	// MinCount is the fewest texts a word must occur in to be tested
	// (default 5).
	MinCount int
	// UniformPrior tests against 1/classes instead of the empirical class
	// shares.
	UniformPrior bool
	// Smoothing is the add-k constant for PMI (default 1).
	Smoothing float64
}

func (o *AssociationOptions) defaults() {
	if o.Alpha <= 0 || o.Alpha >= 1 {
		o.Alpha = 0.01
	}
	if o.MinCount <= 0 {
		o.MinCount = 5
	}
	if o.Smoothing <= 0 {
		o.Smoothing = 1
	}
}

// Associate measures, for every vocabulary word of the training texts ids
// (gold classes gold), how much more often
// than chance it occurs with each label (len(labels) classes, words naming
// the vocabulary ids).
//
// The z-statistic is that of Gardner et al. (2021, "Competency Problems: On
// Finding and Removing Artifacts in Language Data", EMNLP): with n the
// number of texts containing the word and p̂ = p̂(y|word),
//
//	z = (p̂ − p0) / sqrt(p0·(1−p0)/n)
//
// Gardner et al. test against the uniform prior p0 = 1/classes, which suits
// their balanced data; for imbalanced data a word spread evenly over texts
// would then look associated with the largest class, so by default p0 is the
// empirical class share of the training texts (UniformPrior selects 1/classes).
// The test is one-sided; a word is flagged when the z of its dominant class
// passes the normal quantile z_{1−α/m}, a Bonferroni correction over the m
// words tested.
//
// PMI follows Gururangan et al. (2018, "Annotation Artifacts in Natural
// Language Inference Data", NAACL): PMI(w, c) = log p(w, c) / (p(w)·p(c)),
// estimated from the word × class table of document counts after adding k to
// every cell of the tested words (they used add-100 on a much larger corpus;
// the default here is 1):
//
//	PMI(w, c) = log (n_wc + k)·N' / ((n_w + C·k)·(N_c + m·k)),  N' = N + m·C·k
//
// where N_c = Σ_w n_wc and N = Σ_c N_c over tested words.
//
// Preconditions: len(gold) = len(ids), 0 ≤ gold[i] < len(labels), every id
// < len(words).
func Associate(ids [][]int32, gold []int, labels []string, words []string, opt AssociationOptions) *Association {
	opt.defaults()
	classes := len(labels)
	V := len(words)
	perClass := make([]int32, V*classes)
	last := make([]int32, V)
	for i := range last {
		last[i] = -1
	}
	classTexts := make([]int, classes)
	for i, text := range ids {
		c := gold[i]
		classTexts[c]++
		for _, id := range text {
			if last[id] == int32(i) {
				continue
			}
			last[id] = int32(i)
			perClass[int(id)*classes+c]++
		}
	}
	a := &Association{Alpha: opt.Alpha, Smoothing: opt.Smoothing, Prior: make([]float64, classes), ByID: make([]int32, V)}
	if opt.UniformPrior {
		a.PriorKind = "uniform"
		for c := range a.Prior {
			a.Prior[c] = 1 / float64(classes)
		}
	} else {
		a.PriorKind = "empirical"
		for c := range a.Prior {
			a.Prior[c] = float64(classTexts[c]) / float64(max(1, len(ids)))
		}
	}
	for id := range a.ByID {
		a.ByID[id] = -1
		if int32(id) == corpus.PAD || int32(id) == corpus.UNK {
			continue
		}
		row := perClass[id*classes : (id+1)*classes]
		n := 0
		for _, v := range row {
			n += int(v)
		}
		if n < opt.MinCount {
			continue
		}
		st := TokenStat{ID: int32(id), Token: words[id], Count: n, PerClass: make([]int, classes),
			Zs: make([]float64, classes), PMIs: make([]float64, classes)}
		for c, v := range row {
			st.PerClass[c] = int(v)
		}
		a.ByID[id] = int32(len(a.Stats))
		a.Stats = append(a.Stats, st)
	}
	a.Tested = len(a.Stats)
	a.Threshold = BonferroniZ(opt.Alpha, a.Tested)
	// PMI margins over the tested words.
	k := opt.Smoothing
	m := float64(a.Tested)
	nc := make([]float64, classes)
	var total float64
	for _, st := range a.Stats {
		for c, v := range st.PerClass {
			nc[c] += float64(v)
			total += float64(v)
		}
	}
	nAll := total + m*float64(classes)*k
	for i := range a.Stats {
		st := &a.Stats[i]
		best := 0
		for c := range st.PerClass {
			st.Zs[c] = ZStat(float64(st.PerClass[c])/float64(st.Count), a.Prior[c], st.Count)
			nw := float64(st.Count) + float64(classes)*k
			st.PMIs[c] = math.Log((float64(st.PerClass[c]) + k) * nAll / (nw * (nc[c] + m*k)))
			if st.Zs[c] > st.Zs[best] {
				best = c
			}
		}
		st.Class, st.Label, st.Z, st.PMI = best, labels[best], st.Zs[best], st.PMIs[best]
		st.Share = float64(st.PerClass[best]) / float64(st.Count)
		st.Flagged = st.Z > a.Threshold
		st.Category = TokenCategory(st.Token)
	}
	return a
}

// Stat returns the statistics of word id, or nil when it was not tested.
func (a *Association) Stat(id int32) *TokenStat {
	if int(id) >= len(a.ByID) || id < 0 || a.ByID[id] < 0 {
		return nil
	}
	return &a.Stats[a.ByID[id]]
}

// ZStat is the z-statistic of a proportion p̂ observed in n trials against a
// null proportion p0 (Gardner et al. 2021): (p̂ − p0)/sqrt(p0(1−p0)/n).
// It is 0 when p0 is 0 or 1 or n is 0.
func ZStat(phat, p0 float64, n int) float64 {
	if n <= 0 || p0 <= 0 || p0 >= 1 {
		return 0
	}
	return (phat - p0) / math.Sqrt(p0*(1-p0)/float64(n))
}

// BonferroniZ is the one-sided standard-normal quantile z_{1−α/m}: the
// threshold a z-statistic must pass for a family-wise level α over m tests
// (m < 1 counts as 1).
func BonferroniZ(alpha float64, m int) float64 {
	m = max(m, 1)
	return distuv.UnitNormal.Quantile(1 - alpha/float64(m))
}
