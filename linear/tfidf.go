package linear

import (
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
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	if len(docs) == 0 {
		return nil, fmt.Errorf("linear: no training texts")
	}
	df := map[string]int{}
	seen := map[string]bool{}
	for _, toks := range docs {
		clear(seen)
		eachNGram(toks, cfg.MinN, cfg.MaxN, func(g string) {
			if !seen[g] {
				seen[g] = true
				df[g]++
			}
		})
	}
	v := &Vectorizer{Config: cfg}
	for g, c := range df {
		if c >= cfg.MinDF {
			v.Features = append(v.Features, g)
		}
	}
	if len(v.Features) == 0 {
		return nil, fmt.Errorf("linear: no n-gram occurs in %d or more training texts: lower the minimum document frequency", cfg.MinDF)
	}
	slices.Sort(v.Features)
	n := float64(len(docs))
	v.IDF = make([]float64, len(v.Features))
	for j, g := range v.Features {
		v.IDF[j] = math.Log((1+n)/(1+float64(df[g]))) + 1
	}
	v.buildIndex()
	return v, nil
}

func (v *Vectorizer) buildIndex() {
	v.index = make(map[string]int32, len(v.Features))
	for j, g := range v.Features {
		v.index[g] = int32(j)
	}
}

// eachNGram calls fn with every n-gram of toks for n in lo..hi, the tokens
// joined by one space, in text order for each n.
func eachNGram(toks []string, lo, hi int, fn func(string)) {
	var b strings.Builder
	for n := lo; n <= hi; n++ {
		for i := 0; i+n <= len(toks); i++ {
			if n == 1 {
				fn(toks[i])
				continue
			}
			b.Reset()
			for k := i; k < i+n; k++ {
				if k > i {
					b.WriteByte(' ')
				}
				b.WriteString(toks[k])
			}
			fn(b.String())
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
	counts := map[int32]int{}
	eachNGram(toks, v.Config.MinN, v.Config.MaxN, func(g string) {
		if j, ok := v.index[g]; ok {
			counts[j]++
		}
	})
	r := Row{Index: make([]int32, 0, len(counts)), Value: make([]float64, 0, len(counts))}
	for j := range counts {
		r.Index = append(r.Index, j)
	}
	slices.Sort(r.Index)
	var ss float64
	for _, j := range r.Index {
		tf := float64(counts[j])
		if v.Config.Sublinear {
			tf = 1 + math.Log(tf)
		}
		x := tf * v.IDF[j]
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
