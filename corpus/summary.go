package corpus

import (
	"encoding/json"
	"fmt"
	"hash/fnv"
	"io"
	"math"
	"sort"
	"strings"
	"text/tabwriter"
	"unicode"
)

// Summary describes a train/test pair of datasets: sizes, class balance,
// vocabulary, token lengths, and duplicate texts within and across the
// splits (a text in both splits is a train/test leak).
type Summary struct {
	Labels    []string       `json:"labels"`
	Splits    []SplitSummary `json:"splits"`
	VocabSize int            `json:"vocab_size"` // word vocabulary of the training split, PAD and UNK included
	// TestOOVRate is the share of the test split's tokens outside the
	// vocabulary; NaN (null in JSON) without a test token to count.
	TestOOVRate     float64          `json:"test_oov_rate"`
	ExactDuplicates []DuplicateGroup `json:"exact_duplicates"`
	NearDuplicates  []DuplicateGroup `json:"near_duplicates"`
	ExactGroups     int              `json:"exact_groups"` // number of groups, also those not listed
	NearGroups      int              `json:"near_groups"`
	Leaks           int              `json:"leaks"` // dev and test examples whose text (exact or near) is also in train
}

// SplitSummary describes one split.
type SplitSummary struct {
	Name        string             `json:"name"`
	Path        string             `json:"path"`
	Examples    int                `json:"examples"`
	PerLabel    map[string]int     `json:"per_label"`
	Balance     map[string]float64 `json:"balance"` // share of examples per label
	TokenLength Percentiles        `json:"token_length"`
}

// Percentiles of token counts per text, by the nearest-rank method
// (common practice, no source). Those of no text are undefined
// (Undefined; null in JSON, "–" in text).
type Percentiles struct {
	P50 int `json:"p50"`
	P90 int `json:"p90"`
	P99 int `json:"p99"`
	Max int `json:"max"`

	none bool // of no text
}

// Undefined reports whether the percentiles are of no text.
func (p Percentiles) Undefined() bool { return p.none }

// MarshalJSON writes the percentiles of no text as nulls.
func (p Percentiles) MarshalJSON() ([]byte, error) {
	if p.none {
		return []byte(`{"p50":null,"p90":null,"p99":null,"max":null}`), nil
	}
	type plain Percentiles
	return json.Marshal(plain(p))
}

// MarshalJSON writes an undefined TestOOVRate (NaN) as null.
func (s Summary) MarshalJSON() ([]byte, error) {
	type plain Summary
	q := struct {
		plain
		TestOOVRate *float64 `json:"test_oov_rate"`
	}{plain: plain(s)}
	if !math.IsNaN(s.TestOOVRate) {
		q.TestOOVRate = &s.TestOOVRate
	}
	return json.Marshal(q)
}

// DuplicateGroup is a set of examples with the same text (exact) or the
// same text after near-duplicate normalization (lower-cased, punctuation,
// digits and symbols removed, white space collapsed).
type DuplicateGroup struct {
	Members       []Location `json:"members"`
	CrossSplit    bool       `json:"cross_split"`    // members in more than one split
	Leak          bool       `json:"leak"`           // members in train and in dev or test
	LabelConflict bool       `json:"label_conflict"` // members carry different labels
	Text          string     `json:"text"`           // the first member's text, cut to 80 bytes
}

// Location names one example.
type Location struct {
	Split string `json:"split"`
	Line  int    `json:"line,omitempty"`
	File  string `json:"file,omitempty"`
	Label string `json:"label"`
}

// maxGroups bounds the duplicate groups listed in a Summary.
const maxGroups = 50

// Summarize describes train and test (test may be nil). The vocabulary is
// built from train with tok's MinCount and MaxVocab.
func Summarize(train, test *Dataset, tok *Tokenizer) Summary {
	return SummarizeThree(train, nil, test, tok)
}

// SummarizeThree describes the training, dev and test splits (dev and test
// may be nil) as Summarize does two; a dev or test example whose text is
// also in the training split counts as a leak.
func SummarizeThree(train, dev, test *Dataset, tok *Tokenizer) Summary {
	var s Summary
	sets := []*Dataset{train}
	names := []string{"train"}
	for _, sp := range []struct {
		d    *Dataset
		name string
	}{{dev, "dev"}, {test, "test"}} {
		if sp.d != nil {
			sets = append(sets, sp.d)
			names = append(names, sp.name)
		}
	}
	labelSet := map[string]bool{}
	for i, d := range sets {
		ss := SplitSummary{Name: names[i], Path: d.Path, Examples: len(d.Examples), PerLabel: d.Counts(), Balance: map[string]float64{}}
		lens := make([]int, len(d.Examples))
		for j, e := range d.Examples {
			lens[j] = len(tok.Tokenize(e.Text))
		}
		ss.TokenLength = percentiles(lens)
		for l, c := range ss.PerLabel {
			labelSet[l] = true
			ss.Balance[l] = float64(c) / float64(len(d.Examples))
		}
		s.Splits = append(s.Splits, ss)
	}
	for l := range labelSet {
		s.Labels = append(s.Labels, l)
	}
	sort.Strings(s.Labels)
	cfg := tok.Config()
	v := BuildVocab(tok, train.Texts(), cfg.MinCount, cfg.MaxVocab)
	s.VocabSize = v.Len()
	s.TestOOVRate = math.NaN()
	if test != nil {
		n, unk := 0, 0
		for _, e := range test.Examples {
			for _, id := range v.Encode(tok.Tokenize(e.Text)) {
				n++
				if id == UNK {
					unk++
				}
			}
		}
		if n > 0 {
			s.TestOOVRate = float64(unk) / float64(n)
		}
	}
	s.duplicates(sets, names)
	return s
}

type member struct {
	split, idx int
	exact      uint64
}

func (s *Summary) duplicates(sets []*Dataset, names []string) {
	exact := map[uint64][]member{}
	near := map[uint64][]member{}
	for si, d := range sets {
		for i, e := range d.Examples {
			m := member{si, i, hashString(e.Text)}
			exact[m.exact] = append(exact[m.exact], m)
			if k := NearKey(e.Text); k != "" { // texts of digits and marks alone are not near copies of each other
				nk := hashString(k)
				near[nk] = append(near[nk], m)
			}
		}
	}
	leaked := map[member]bool{}
	build := func(ms []member) DuplicateGroup {
		var g DuplicateGroup
		labels := map[string]bool{}
		splits := map[int]bool{}
		for _, m := range ms {
			e := sets[m.split].Examples[m.idx]
			g.Members = append(g.Members, Location{Split: names[m.split], Line: e.Line, File: e.File, Label: e.Label})
			labels[e.Label] = true
			splits[m.split] = true
		}
		g.CrossSplit = len(splits) > 1
		g.LabelConflict = len(labels) > 1
		g.Text = truncate(sets[ms[0].split].Examples[ms[0].idx].Text, 80)
		g.Leak = g.CrossSplit && splits[0] // a dev or test text also in train
		if g.Leak {
			for _, m := range ms {
				if m.split > 0 {
					leaked[m] = true
				}
			}
		}
		return g
	}
	collect := func(groups map[uint64][]member, keep func([]member) bool) ([]DuplicateGroup, int) {
		var all []DuplicateGroup
		for _, ms := range groups {
			if len(ms) > 1 && keep(ms) {
				all = append(all, build(ms))
			}
		}
		sort.Slice(all, func(i, j int) bool {
			a, b := all[i], all[j]
			if a.CrossSplit != b.CrossSplit {
				return a.CrossSplit
			}
			if len(a.Members) != len(b.Members) {
				return len(a.Members) > len(b.Members)
			}
			return lessLoc(a.Members[0], b.Members[0])
		})
		n := len(all)
		if len(all) > maxGroups {
			all = all[:maxGroups]
		}
		return all, n
	}
	s.ExactDuplicates, s.ExactGroups = collect(exact, func([]member) bool { return true })
	// A near group is listed only if it holds more than one distinct text.
	s.NearDuplicates, s.NearGroups = collect(near, func(ms []member) bool {
		for _, m := range ms[1:] {
			if m.exact != ms[0].exact {
				return true
			}
		}
		return false
	})
	s.Leaks = len(leaked)
}

// splitOrder ranks split names as they are listed.
var splitOrder = map[string]int{"train": 0, "dev": 1, "test": 2}

func lessLoc(a, b Location) bool {
	if a.Split != b.Split {
		return splitOrder[a.Split] < splitOrder[b.Split]
	}
	if a.File != b.File {
		return a.File < b.File
	}
	return a.Line < b.Line
}

func hashString(s string) uint64 {
	h := fnv.New64a()
	io.WriteString(h, s)
	return h.Sum64()
}

// CopyKey lower-cases s, collapses white space and drops punctuation
// except between two digits: two texts with the same key, not empty, hold
// the same words, numbers ("13:40" is not "1340") and symbols (emoji, £)
// and differ at most in case, spacing and punctuation.
func CopyKey(s string) string {
	return foldText(s, func(rs []rune, i int) bool {
		r := rs[i]
		return unicode.IsPunct(r) && !(i > 0 && i+1 < len(rs) && unicode.IsDigit(rs[i-1]) && unicode.IsDigit(rs[i+1]))
	})
}

// NearKey lower-cases s, drops punctuation, symbols and digits and
// collapses white space: two texts with the same key, not empty, are
// near-exact copies (Summary's near groups and leaks), texts that may
// differ in their numbers too (a template filled with other dates or
// references).
func NearKey(s string) string {
	return foldText(s, func(rs []rune, i int) bool {
		r := rs[i]
		return unicode.IsPunct(r) || unicode.IsSymbol(r) || unicode.IsDigit(r)
	})
}

// foldText lower-cases s, collapses white space, and drops format and
// control characters and the runes drop says (given the runes and the
// index).
func foldText(s string, drop func(rs []rune, i int) bool) string {
	rs := []rune(s)
	var b strings.Builder
	space := false
	for i, r := range rs {
		switch {
		case unicode.IsSpace(r):
			space = b.Len() > 0
		case unicode.Is(unicode.Cf, r) || unicode.Is(unicode.Cc, r) || drop(rs, i):
		default:
			if space {
				b.WriteByte(' ')
				space = false
			}
			b.WriteRune(unicode.ToLower(r))
		}
	}
	return b.String()
}

// percentiles returns nearest-rank percentiles of xs (undefined for none).
func percentiles(xs []int) Percentiles {
	if len(xs) == 0 {
		return Percentiles{none: true}
	}
	s := append([]int(nil), xs...)
	sort.Ints(s)
	rank := func(p float64) int {
		k := int(math.Ceil(p/100*float64(len(s)))) - 1
		return s[max(k, 0)]
	}
	return Percentiles{P50: rank(50), P90: rank(90), P99: rank(99), Max: s[len(s)-1]}
}

// share writes a percentage with one decimal, "–" for a split of no
// examples (a share of nothing).
func share(percent float64, examples int) string {
	if examples == 0 {
		return "–"
	}
	return fmt.Sprintf("%.1f", percent)
}

// WriteText writes the summary as readable tables.
func (s Summary) WriteText(out io.Writer) error {
	w := &errWriter{w: out}
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	row := func(cells ...string) { fmt.Fprintln(tw, strings.Join(cells, "\t")) }
	head := []string{"label"}
	for _, sp := range s.Splits {
		head = append(head, sp.Name, "%")
	}
	row(head...)
	for _, l := range s.Labels {
		cells := []string{l}
		for _, sp := range s.Splits {
			cells = append(cells, fmt.Sprint(sp.PerLabel[l]), share(100*sp.Balance[l], sp.Examples))
		}
		row(cells...)
	}
	all := []string{"all"}
	for _, sp := range s.Splits {
		all = append(all, fmt.Sprint(sp.Examples), share(100, sp.Examples))
	}
	row(all...)
	tw.Flush()
	fmt.Fprintf(w, "\nvocabulary: %d entries (train)", s.VocabSize)
	held := map[string]bool{}
	for _, sp := range s.Splits[1:] {
		held[sp.Name] = true
	}
	switch {
	case held["test"] && math.IsNaN(s.TestOOVRate):
		fmt.Fprint(w, "; test tokens not in it: – (no test token)")
	case held["test"]:
		fmt.Fprintf(w, "; test tokens not in it: %.1f%%", 100*s.TestOOVRate)
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "tokens per text:")
	for _, sp := range s.Splits {
		p := sp.TokenLength
		if p.Undefined() {
			fmt.Fprintf(w, "  %-5s p50 –  p90 –  p99 –  max –  (no text)\n", sp.Name)
			continue
		}
		fmt.Fprintf(w, "  %-5s p50 %d  p90 %d  p99 %d  max %d\n", sp.Name, p.P50, p.P90, p.P99, p.Max)
	}
	leaked := "test"
	if held["dev"] {
		leaked = "dev or test"
	}
	fmt.Fprintf(w, "duplicates: %d exact groups, %d near-exact groups; %d %s examples also in train\n", s.ExactGroups, s.NearGroups, s.Leaks, leaked)
	for _, part := range []struct {
		name string
		gs   []DuplicateGroup
	}{{"exact", s.ExactDuplicates}, {"near", s.NearDuplicates}} {
		for _, g := range part.gs {
			var locs []string
			for _, m := range g.Members {
				where := m.File
				if where == "" {
					where = fmt.Sprintf("line %d", m.Line)
				}
				locs = append(locs, fmt.Sprintf("%s %s (%s)", m.Split, where, m.Label))
			}
			flags := ""
			if g.Leak {
				flags += " LEAK"
			} else if g.CrossSplit {
				flags += " DEV-AND-TEST"
			}
			if g.LabelConflict {
				flags += " CONFLICTING-LABELS"
			}
			fmt.Fprintf(w, "  %s%s %q: %s\n", part.name, flags, g.Text, strings.Join(locs, ", "))
		}
	}
	return w.err
}

// errWriter keeps the first write error.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return len(p), nil
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}
