package linear

import (
	"encoding/binary"
	"fmt"
	"math"
	"slices"
	"strings"
)

// FeatureConfig is how texts become TF-IDF rows. Zero fields take the
// defaults noted.
type FeatureConfig struct {
	MinN      int  `json:"min_n"`     // shortest n-gram; default 1
	MaxN      int  `json:"max_n"`     // longest n-gram; default 2
	MinDF     int  `json:"min_df"`    // training texts an n-gram must occur in; default 1
	Sublinear bool `json:"sublinear"` // term frequency 1 + ln count instead of the count
}

func (c FeatureConfig) withDefaults() (FeatureConfig, error) {
	if c.MinN == 0 {
		c.MinN = 1
	}
	if c.MaxN == 0 {
		c.MaxN = max(2, c.MinN)
	}
	if c.MinDF == 0 {
		c.MinDF = 1
	}
	switch {
	case c.MinN < 1 || c.MaxN < c.MinN || c.MaxN > 8:
		return c, fmt.Errorf("linear: n-gram range %d..%d: need 1 ≤ min ≤ max ≤ 8", c.MinN, c.MaxN)
	case c.MinDF < 1:
		return c, fmt.Errorf("linear: minimum document frequency %d: must be at least 1", c.MinDF)
	}
	return c, nil
}

// Vectorizer maps token lists to TF-IDF rows. It is safe for concurrent use
// once fitted.
type Vectorizer struct {
	Config   FeatureConfig `json:"config"`
	Features []string      `json:"features"` // n-gram texts, sorted; feature j is Features[j]
	IDF      []float64     `json:"-"`        // by feature
	index    map[string]int32
}

// FitVectorizer builds the features of the training texts docs (each a list
// of tokens).
func FitVectorizer(docs [][]string, cfg FeatureConfig) (*Vectorizer, error) {
	v, _, err := fitVectorizer(docs, cfg)
	return v, err
}

// fitVectorizer builds the features of docs and returns, with the
// vectorizer, the TF-IDF rows of docs (equal to Transform's).
func fitVectorizer(docs [][]string, cfg FeatureConfig) (*Vectorizer, []Row, error) {
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, nil, err
	}
	if len(docs) == 0 {
		return nil, nil, fmt.Errorf("linear: no training texts")
	}
	gt := newGramTable()
	docGrams := make([][]int32, len(docs))
	for d, toks := range docs {
		docGrams[d] = gt.add(toks, int32(d), cfg.MinN, cfg.MaxN)
	}
	v := &Vectorizer{Config: cfg}
	var kept []int32 // grams kept as features
	for g, df := range gt.df {
		if int(df) >= cfg.MinDF {
			kept = append(kept, int32(g))
		}
	}
	if len(kept) == 0 {
		return nil, nil, fmt.Errorf("linear: no n-gram occurs in %d or more training texts: lower the minimum document frequency", cfg.MinDF)
	}
	texts := make([]string, gt.grams())
	for _, g := range kept {
		texts[g] = gt.text(g)
	}
	slices.SortFunc(kept, func(a, b int32) int { return strings.Compare(texts[a], texts[b]) })
	feature := make([]int32, gt.grams())
	for g := range feature {
		feature[g] = -1
	}
	n := float64(len(docs))
	v.Features, v.IDF = make([]string, len(kept)), make([]float64, len(kept))
	for j, g := range kept {
		feature[g] = int32(j)
		v.Features[j] = texts[g]
		v.IDF[j] = math.Log((1+n)/(1+float64(gt.df[g]))) + 1
	}
	v.buildIndex()
	rows := make([]Row, len(docs))
	var ids []int32
	for d, grams := range docGrams {
		ids = ids[:0]
		for _, g := range grams {
			if j := feature[g]; j >= 0 {
				ids = append(ids, j)
			}
		}
		rows[d] = v.row(ids)
	}
	return v, rows, nil
}

// gramTable numbers the words and the n-grams of the training texts and
// counts the texts each n-gram occurs in.
type gramTable struct {
	word      map[string]int32 // word → its number
	words     []string
	unigram   []int32          // word number → its 1-gram's number, or -1
	multi     map[string]int32 // the word numbers of an n-gram (n ≥ 2), 4 bytes each → its number
	gramWords []int32          // the word numbers of gram g: gramWords[start[g]:start[g+1]]
	start     []int32
	df        []int32 // by gram
	lastDoc   []int32 // by gram: the last text it was counted in
	ids       []int32
	key       []byte
}

func newGramTable() *gramTable {
	return &gramTable{word: map[string]int32{}, multi: map[string]int32{}, start: []int32{0}}
}

func (t *gramTable) grams() int { return len(t.df) }

// add counts the n-grams (n in lo..hi) of text d, whose tokens are toks,
// and returns their numbers, one per occurrence.
func (t *gramTable) add(toks []string, d int32, lo, hi int) []int32 {
	t.ids = t.ids[:0]
	for _, w := range toks {
		id, ok := t.word[w]
		if !ok {
			id = int32(len(t.words))
			t.word[w] = id
			t.words = append(t.words, w)
			t.unigram = append(t.unigram, -1)
		}
		t.ids = append(t.ids, id)
	}
	var out []int32
	for n := lo; n <= hi; n++ {
		for i := 0; i+n <= len(t.ids); i++ {
			g := t.gram(t.ids[i : i+n])
			out = append(out, g)
			if t.lastDoc[g] != d {
				t.lastDoc[g] = d
				t.df[g]++
			}
		}
	}
	return out
}

// gram returns the number of the n-gram of the words ids, numbering it if
// it is new.
func (t *gramTable) gram(ids []int32) int32 {
	if len(ids) == 1 {
		if g := t.unigram[ids[0]]; g >= 0 {
			return g
		}
		g := t.newGram(ids)
		t.unigram[ids[0]] = g
		return g
	}
	t.key = t.key[:0]
	for _, id := range ids {
		t.key = binary.LittleEndian.AppendUint32(t.key, uint32(id))
	}
	if g, ok := t.multi[string(t.key)]; ok {
		return g
	}
	g := t.newGram(ids)
	t.multi[string(t.key)] = g
	return g
}

func (t *gramTable) newGram(ids []int32) int32 {
	g := int32(len(t.df))
	t.gramWords = append(t.gramWords, ids...)
	t.start = append(t.start, int32(len(t.gramWords)))
	t.df = append(t.df, 0)
	t.lastDoc = append(t.lastDoc, -1)
	return g
}

// text is gram g's words joined by one space.
func (t *gramTable) text(g int32) string {
	ids := t.gramWords[t.start[g]:t.start[g+1]]
	if len(ids) == 1 {
		return t.words[ids[0]]
	}
	var b strings.Builder
	for i, id := range ids {
		if i > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(t.words[id])
	}
	return b.String()
}

func (v *Vectorizer) buildIndex() {
	v.index = make(map[string]int32, len(v.Features))
	for j, g := range v.Features {
		v.index[g] = int32(j)
	}
}

// eachNGram calls fn with every n-gram of toks for n in lo..hi, the tokens
// joined by one space, in text order for each n. The bytes passed to fn
// are valid until it returns.
func eachNGram(toks []string, lo, hi int, fn func([]byte)) {
	var b []byte
	for n := lo; n <= hi; n++ {
		for i := 0; i+n <= len(toks); i++ {
			b = append(b[:0], toks[i]...)
			for k := i + 1; k < i+n; k++ {
				b = append(append(b, ' '), toks[k]...)
			}
			fn(b)
		}
	}
}

// Row is one sparse TF-IDF row: feature indexes in increasing order and
// their values.
type Row struct {
	Index []int32
	Value []float64
}

// Transform returns the TF-IDF row of one text's tokens; n-grams that are
// not features are ignored, so a text of unseen n-grams gives an empty row.
func (v *Vectorizer) Transform(toks []string) Row {
	var ids []int32
	eachNGram(toks, v.Config.MinN, v.Config.MaxN, func(g []byte) {
		if j, ok := v.index[string(g)]; ok {
			ids = append(ids, j)
		}
	})
	return v.row(ids)
}

// row is the TF-IDF row of a text whose n-grams are the features ids (one
// per occurrence, in any order; ids is sorted in place).
func (v *Vectorizer) row(ids []int32) Row {
	slices.Sort(ids)
	distinct := 0
	for i, j := range ids {
		if i == 0 || j != ids[i-1] {
			distinct++
		}
	}
	r := Row{Index: make([]int32, 0, distinct), Value: make([]float64, 0, distinct)}
	var ss float64
	for i := 0; i < len(ids); {
		j, count := ids[i], 1
		for i+count < len(ids) && ids[i+count] == j {
			count++
		}
		i += count
		tf := float64(count)
		if v.Config.Sublinear {
			tf = 1 + math.Log(tf)
		}
		x := tf * v.IDF[j]
		r.Index = append(r.Index, j)
		r.Value = append(r.Value, x)
		ss += x * x
	}
	if ss > 0 {
		inv := 1 / math.Sqrt(ss)
		for i := range r.Value {
			r.Value[i] *= inv
		}
	}
	return r
}

// TransformAll returns the rows of docs.
func (v *Vectorizer) TransformAll(docs [][]string) []Row {
	out := make([]Row, len(docs))
	for i, d := range docs {
		out[i] = v.Transform(d)
	}
	return out
}
