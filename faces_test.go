package main

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/testref"
)

// TestExplainTextShowsTheJSONNumbers: what explain writes for a reader is
// the identified split its --json gives (output bias, filter biases, token
// shares adding up to the log-odds of the label against the runner-up), the
// fired filters' parts of it and every window kept down with its estimate
// and its measured check.
func TestExplainTextShowsTheJSONNumbers(t *testing.T) {
	model := tinyModel(t)
	text := "The deckhand was not friendly at all and my refund never came."
	args := []string{"explain", "--model", model, "--text", text, "--kept-down", "3", "--color", "never"}
	code, out, stderr := tt(t, args...)
	if code != 0 {
		t.Fatalf("explain: exit %d: %s", code, stderr)
	}
	code, js, stderr := tt(t, append(args, "--json")...)
	if code != 0 {
		t.Fatalf("explain --json: exit %d: %s", code, stderr)
	}
	var e explain.Explanation
	if err := json.Unmarshal([]byte(js), &e); err != nil {
		t.Fatal(err)
	}
	lo := e.LogOdds
	var fb, tok float64
	for _, v := range lo.FilterBias {
		fb += v
	}
	for _, v := range lo.Tokens {
		tok += v
	}
	q := fmt.Sprintf("log p(%s)/p(%s)", e.Label, e.Labels[e.RunnerUp])
	want := []string{
		fmt.Sprintf("%s = %+.3f = output bias %+.3f + filter biases %+.3f + token shares %+.3f", q, lo.Value, lo.OutputBias, fb, tok),
		"filters that fired, by their part of " + q,
	}
	if len(e.KeptDown) == 0 {
		t.Fatalf("no window kept down on %q: the check checks nothing", text)
	}
	for _, kd := range e.KeptDown {
		want = append(want, fmt.Sprintf("filter %-4d width %d", kd.Filter, kd.Width),
			fmt.Sprintf("estimated %+.3f; measured: this filter %+.3f, other filters %+.3f", kd.Effect, kd.Own, kd.WordsHeld-lo.Value-kd.Own),
			fmt.Sprintf("whole %+.3f (p(%s) %s)", kd.LogOdds-lo.Value, e.Label, change(kd.Drop)))
	}
	for _, w := range want {
		if !strings.Contains(out, w) {
			t.Errorf("explain's text lacks %q:\n%s", w, out)
		}
	}
	// The largest part of the log-odds among the fired filters is listed first.
	best := 0
	for k := range e.Filters {
		if math.Abs(lo.Filters[k]) > math.Abs(lo.Filters[best]) {
			best = k
		}
	}
	first := fmt.Sprintf("filter %-4d width %d  %+.3f (%+.3f)", e.Filters[best].Filter, e.Filters[best].Width, lo.Filters[best], lo.FilterBias[best])
	if _, after, _ := strings.Cut(out, "filters that fired"); !strings.Contains(strings.SplitN(after, "\n", 3)[1], first) {
		t.Errorf("the first fired filter listed is not %q:\n%s", first, out)
	}
	// --class: the centred logit of that label.
	c := (e.Class + 1) % len(e.Labels)
	code, out, _ = tt(t, "explain", "--model", model, "--text", text, "--class", e.Labels[c], "--color", "never")
	s := e.Centred[c]
	if code != 0 || !strings.Contains(out, fmt.Sprintf("the centred logit of %s = %+.3f = output bias %+.3f", e.Labels[c], s.Value, s.OutputBias)) {
		t.Errorf("explain --class %s: exit %d, no split of its centred logit %+.3f:\n%s", e.Labels[c], code, s.Value, out)
	}
}

// TestGrowingTableExplanations: explaining text after text with the one
// table that the texts' words fill (explainText) gives the explanations
// that a table of each text's own words gives, and the table ends holding
// every distinct word of the texts once.
func TestGrowingTableExplanations(t *testing.T) {
	m, err := cnn.Load(tinyModel(t))
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	tables, err := explain.NewGrowingTable(m, 0)
	if err != nil {
		t.Fatal(err)
	}
	ds, _, err := corpus.Load(filepath.Join("testdata", "demo", "test.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	words := map[int32]bool{corpus.PAD: true, corpus.UNK: true}
	opt := explain.ExplainOptions{Occlusion: true, KeptDown: 2}
	for i, ex := range ds.Examples[:400] {
		with, _, err := explainText(m, enc, ex.Text, opt, tables)
		if err != nil {
			t.Fatal(err)
		}
		toks, ids := enc.Encode(ex.Text)
		for _, id := range ids {
			words[id] = true
		}
		if got := tables.Table().Tabled(); got != len(words) {
			t.Fatalf("text %d: the table holds %d words, the texts so far %d", i, got, len(words))
		}
		if i%20 != 0 {
			continue
		}
		without, err := explain.Explain(m, toks, ids, opt)
		if err != nil {
			t.Fatal(err)
		}
		a, _ := json.Marshal(with)
		b, _ := json.Marshal(without)
		if path, ok := jsonNumbersClose(a, b); !ok {
			t.Errorf("text %d: the explanation with the growing table differs from the one with the text's own at %s", i, path)
		}
	}
}

// jsonNumbersClose reports whether two JSON documents have the same
// structure and strings, and numbers within 1e-5 (absolute or relative):
// the two tables compute the same float32 dot products with kernels that
// may add in another order, a few units in 1e-7 apart.
func jsonNumbersClose(a, b []byte) (string, bool) {
	var x, y any
	if json.Unmarshal(a, &x) != nil || json.Unmarshal(b, &y) != nil {
		return "(not JSON)", false
	}
	var walk func(path string, x, y any) (string, bool)
	walk = func(path string, x, y any) (string, bool) {
		switch x := x.(type) {
		case map[string]any:
			y, ok := y.(map[string]any)
			if !ok || len(x) != len(y) {
				return path, false
			}
			for k, v := range x {
				if p, ok := walk(path+"."+k, v, y[k]); !ok {
					return p, false
				}
			}
		case []any:
			y, ok := y.([]any)
			if !ok || len(x) != len(y) {
				return path, false
			}
			for i := range x {
				if p, ok := walk(fmt.Sprintf("%s[%d]", path, i), x[i], y[i]); !ok {
					return p, false
				}
			}
		case float64:
			y, ok := y.(float64)
			if !ok || !testref.Close(x, y, 1e-5, 1e-5) {
				return fmt.Sprintf("%s (%v, %v)", path, x, y), false
			}
		default:
			if x != y {
				return path, false
			}
		}
		return "", true
	}
	return walk("", x, y)
}

// inexactNegatives counts p's filters whose negative n-grams are marked
// inexact.
func inexactNegatives(p *explain.Profiles) int {
	n := 0
	for _, f := range p.Filters {
		if !f.NegativesExact {
			n++
		}
	}
	return n
}

// TestFiltersTextAndReopen: filters reads its file again when a filter's
// negative n-grams need a second search, so that every one is exact (on one
// thread, the demo corpus needs it: without the second reading some are
// not); the text says which filters are not selective and brackets the
// words at the negative slots of each negative n-gram.
func TestFiltersTextAndReopen(t *testing.T) {
	model := filepath.Join(t.TempDir(), "m.tt")
	// filters reads no linear baseline: none is fitted.
	if code, _, stderr := tt(t, "train", "--data", demoPart(t, t.TempDir(), 1000), "--out", model, "--epochs", "1", "--dim", "16",
		"--maps", "60", "--threads", "1", "--baseline=false", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	data := filepath.Join("testdata", "demo", "train.csv")
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	var ro readOptions
	ro.MaxTextBytes = corpus.DefaultMaxTextBytes
	next, stop := streamTexts(context.Background(), data, ro.corpusOptions(false), ro.example, enc, m.Labels)
	once, err := explain.ProfileStream(context.Background(), m, next, explain.ProfileOptions{Workers: 1, TopK: 3, Negatives: 3})
	stop()
	if err != nil {
		t.Fatal(err)
	}
	inexact := inexactNegatives(once)
	if inexact == 0 {
		t.Fatalf("read once, every filter's negative n-grams are exact: the check checks nothing")
	}
	t.Logf("read once, %d of %d filters' negative n-grams are not exact", inexact, len(once.Filters))
	code, js, stderr := tt(t, "filters", "--model", model, "--data", data, "--threads", "1", "--top", "3", "--json", "--quiet")
	if code != 0 {
		t.Fatalf("filters --json: exit %d: %s", code, stderr)
	}
	var p explain.Profiles
	if err := json.Unmarshal([]byte(js), &p); err != nil {
		t.Fatal(err)
	}
	for _, f := range p.Filters {
		if !f.NegativesExact {
			t.Errorf("filter %d: negative n-grams not exact though the file can be read again", f.Filter)
		}
	}
	code, out, stderr := tt(t, "filters", "--model", model, "--data", data, "--threads", "1", "--top", "3", "--quiet")
	if code != 0 {
		t.Fatalf("filters: exit %d: %s", code, stderr)
	}
	blocks := strings.Split(out, "\nfilter ")[1:]
	if len(blocks) != len(p.Filters) {
		t.Fatalf("%d filters written, %d profiled", len(blocks), len(p.Filters))
	}
	negatives := 0
	for i, f := range p.Filters {
		b := blocks[i]
		if strings.Contains(strings.SplitN(b, "\n", 2)[0], "[not selective]") == f.Selectivity.Selective {
			t.Errorf("filter %d: selective %v, heading %q", f.Filter, f.Selectivity.Selective, strings.SplitN(b, "\n", 2)[0])
		}
		for _, n := range f.Negatives {
			negatives++
			if !strings.Contains(b, fmt.Sprintf("%8.3f  %.3f → %.3f  ×%-5d %s", n.HeldDownLogOdds, n.PositiveLogOdds, n.ActivationLogOdds, n.Count,
				slotString(n.Tokens, n.SlotsLogOdds, n.NegativeSlots))) {
				t.Errorf("filter %d: negative n-gram %q not written", f.Filter, n.Tokens)
			}
			for _, s := range n.NegativeSlots {
				if !(n.SlotsLogOdds[s] < 0) || !strings.Contains(slotString(n.Tokens, n.SlotsLogOdds, n.NegativeSlots), "["+n.Tokens[s]+"]") {
					t.Errorf("filter %d: negative slot %d of %q (score %g) not bracketed", f.Filter, s, n.Tokens, n.SlotsLogOdds[s])
				}
			}
		}
	}
	if negatives == 0 {
		t.Errorf("no negative n-gram written: the check checks nothing")
	}
}

// TestFaithfulnessText: the text gives each method's aggregates with their
// intervals, the single-token figures apart and the paired tests (each
// mean difference with its interval, simultaneous over the 18, its p and
// its Holm p, which is explain.Holm of the 18 p-values), as in --json,
// where figures without a text are null.
func TestFaithfulnessText(t *testing.T) {
	model := tinyModel(t)
	data := demoPart(t, t.TempDir(), 200)
	args := []string{"faithfulness", "--model", model, "--data", data, "--limit", "60", "--quiet"}
	code, out, stderr := tt(t, args...)
	if code != 0 {
		t.Fatalf("faithfulness: exit %d: %s", code, stderr)
	}
	code, js, stderr := tt(t, append(args, "--json")...)
	if code != 0 {
		t.Fatalf("faithfulness --json: exit %d: %s", code, stderr)
	}
	if strings.Contains(js, "NaN") {
		t.Errorf("--json holds NaN")
	}
	var r struct {
		AccuracyInterval *struct{ Estimate, Low, High float64 } `json:"accuracy_interval"`
		Percents         []float64                              `json:"percents"`
		Methods          []struct {
			Method              string     `json:"method"`
			Comp                *float64   `json:"comp"`
			CompCI              ciJSON     `json:"comp_ci"`
			Comprehensiveness   []*float64 `json:"comprehensiveness"`
			ComprehensivenessCI []ciJSON   `json:"comprehensiveness_ci"`
			PercentTexts        []int      `json:"percent_texts"`
		} `json:"methods"`
		Pairs []struct {
			A, B, Measure string
			Texts         int      `json:"texts"`
			Diff          *float64 `json:"diff"`
			DiffCI        ciJSON   `json:"diff_ci"`
			DiffCILevel   float64  `json:"diff_ci_level"`
			DiffCIDrawn   int      `json:"diff_ci_resamples"`
			P             *float64 `json:"p"`
			PHolm         *float64 `json:"p_holm"`
			SignFlips     int      `json:"sign_flips"`
		} `json:"pairs"`
	}
	if err := json.Unmarshal([]byte(js), &r); err != nil {
		t.Fatal(err)
	}
	if len(r.Methods) != 4 || len(r.Pairs) != 18 {
		t.Fatalf("%d methods and %d pairs, want 4 and 18 (3 measures of 6 pairs)", len(r.Methods), len(r.Pairs))
	}
	for _, mf := range r.Methods {
		line := fmt.Sprintf("%-10s  %+.4f (%+.4f–%+.4f)", mf.Method, *mf.Comp, *mf.CompCI.Low, *mf.CompCI.High)
		if !strings.Contains(out, line) {
			t.Errorf("the text lacks %q:\n%s", line, out)
		}
		// Each share's figure with its interval, as in --json.
		for pi, c := range mf.Comprehensiveness {
			if c == nil {
				continue
			}
			ci := mf.ComprehensivenessCI[pi]
			line := fmt.Sprintf("%-10s  %5g%%  %6d  %+.4f (%+.4f–%+.4f)", mf.Method, r.Percents[pi], mf.PercentTexts[pi], *c, *ci.Low, *ci.High)
			if !strings.Contains(out, line) {
				t.Errorf("the text lacks %q:\n%s", line, out)
			}
		}
	}
	if a := r.AccuracyInterval; a == nil || !strings.Contains(out, fmt.Sprintf("model accuracy %.3f (%.3f–%.3f)", a.Estimate, a.Low, a.High)) {
		t.Errorf("the model's accuracy without its interval (JSON %+v):\n%s", a, out)
	}
	// Each pair with its interval, its p and its Holm p across the 18 (at
	// least its p), as in --json.
	var ps []float64
	for _, pr := range r.Pairs {
		if pr.P == nil || pr.PHolm == nil || pr.Diff == nil || pr.SignFlips < 2 {
			t.Fatalf("pair %s − %s %s: p %v, Holm p %v, diff %v over %d sign patterns", pr.A, pr.B, pr.Measure, pr.P, pr.PHolm, pr.Diff, pr.SignFlips)
		}
		ps = append(ps, *pr.P)
		// Simultaneous over the 18 (Bonferroni): each at 1 − 0.05/18, from
		// ⌈40·18/0.05⌉ = 14,400 resamples, 20 expected in each tail.
		if pr.DiffCILevel != 1-0.05/18 || pr.DiffCIDrawn != 14400 {
			t.Errorf("pair %s − %s %s: interval at level %g from %d resamples, want 1 − 0.05/18 from 14400", pr.A, pr.B, pr.Measure, pr.DiffCILevel, pr.DiffCIDrawn)
		}
		p, holm := pEquals(*pr.P), pEquals(*pr.PHolm)
		if pr.SignFlips == explain.SignFlipDraws && *pr.P == 1/float64(pr.SignFlips+1) { // the drawn test's floor: bounds
			p, holm = "≤ "+pvalue(*pr.P), "≤ "+pvalue(*pr.PHolm)
		}
		line := fmt.Sprintf("%-10s − %-10s %-5s %+.4f (%+.4f–%+.4f)  p %s  Holm p %s  (%d texts)", pr.A, pr.B, pr.Measure, *pr.Diff,
			*pr.DiffCI.Low, *pr.DiffCI.High, p, holm, pr.Texts)
		if !strings.Contains(out, line) {
			t.Errorf("the text lacks %q:\n%s", line, out)
		}
	}
	for i, adj := range explain.Holm(ps) {
		if *r.Pairs[i].PHolm != adj {
			t.Errorf("pair %d: Holm p %g, Holm's adjustment of the 18 p-values %g", i, *r.Pairs[i].PHolm, adj)
		}
	}
	for _, part := range []string{"the top token alone", "methods compared text by text", "exact      − occlusion  comp",
		"adjusted by Holm's method across the 18 comparisons", "simultaneous over those comparisons, 95% together (Bonferroni:\neach at 99.72%, from 14400 resamples)"} {
		if !strings.Contains(out, part) {
			t.Errorf("the text lacks %q", part)
		}
	}
}

type ciJSON struct {
	Low  *float64 `json:"low"`
	High *float64 `json:"high"`
}

// wideLine reads back the exact split explain writes for a model with the
// wide path: the value, the output bias with the unknown word's weight, the
// filter biases, the token shares and the word weights of them.
var wideLine = regexp.MustCompile(`= ([+-][0-9.]+) = output bias with the unknown word's weight ([+-][0-9.]+) \+ filter biases ([+-][0-9.]+) \+ token shares ([+-][0-9.]+) \(word weights ([+-][0-9.]+)\)\n`)

// wideIGLine reads back integrated gradients' completeness line for a
// model with the wide path: the value, the baseline and the word weights.
var wideIGLine = regexp.MustCompile(`= ([+-][0-9.]+), with every word vector zero and the unknown word's weight ([+-][0-9.]+): the token scores \(word weights ([+-][0-9.]+)\) add up to the difference`)

// TestExplainTextWideModel: on a model with word weights alone (train
// --wide-bigrams=false), explain's text
// names the unknown word's weight in the output bias and the word weights
// in the token shares, for the log-odds, a label's centred logit and
// integrated gradients. The numbers written are read back: they add up to
// the value written, and the output bias and word weights are those
// computed here from the model file's weights (Σ_c v_c·(OutB[c] +
// Wide[UNK][c]) and Σ_i Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N, the split
// documented in explain.Shares). Rounding: every number is written to 3
// decimals, so each is off by at most 5e-4.
func TestExplainTextWideModel(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 1500)
	model := filepath.Join(dir, "wide.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "5", "--dim", "8", "--maps", "4", "--wide-bigrams=false", "--quiet"); code != 0 {
		t.Fatalf("train --wide-bigrams=false: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	text := "The deckhand was not friendly at all and my refund never came."
	_, ids := enc.Encode(text)
	code, js, stderr := tt(t, "explain", "--model", model, "--text", text, "--json")
	if code != 0 {
		t.Fatalf("explain --json: exit %d: %s", code, stderr)
	}
	var e explain.Explanation
	if err := json.Unmarshal([]byte(js), &e); err != nil {
		t.Fatal(err)
	}
	C := m.Config.Classes
	// parts returns the output bias and the word weights of the contrast v.
	parts := func(v []float64) (bias, words float64) {
		unk := int(corpus.UNK) * C
		n := 0
		for _, id := range ids {
			if id != corpus.PAD {
				n++
			}
		}
		for c := range C {
			bias += v[c] * (float64(m.OutB[c]) + float64(m.Wide[unk+c]))
			for _, id := range ids {
				if id != corpus.PAD {
					words += v[c] * (float64(m.Wide[int(id)*C+c]) - float64(m.Wide[unk+c])) / float64(n)
				}
			}
		}
		return bias, words
	}
	logOdds := make([]float64, C)
	logOdds[e.Class], logOdds[e.RunnerUp] = 1, -1
	other := (e.Class + 1) % C
	centred := make([]float64, C)
	for c := range centred {
		centred[c] = -1 / float64(C)
	}
	centred[other]++
	const half = 5e-4
	for _, tc := range []struct {
		name string
		args []string
		v    []float64
	}{
		{"log-odds", nil, logOdds},
		{"centred logit of " + e.Labels[other], []string{"--class", e.Labels[other]}, centred},
	} {
		code, out, stderr := tt(t, append([]string{"explain", "--model", model, "--text", text, "--color", "never"}, tc.args...)...)
		if code != 0 {
			t.Fatalf("explain (%s): exit %d: %s", tc.name, code, stderr)
		}
		mt := wideLine.FindStringSubmatch(out)
		if mt == nil {
			t.Fatalf("%s: no split naming the wide path's parts:\n%s", tc.name, out)
		}
		got := testref.Floats(t, mt) // value, bias, filter biases, tokens, words
		if !testref.Close(got[0], got[1]+got[2]+got[3], 4*half, 0) {
			t.Errorf("%s: %q does not add up (%g)", tc.name, mt[0], got[1]+got[2]+got[3])
		}
		bias, words := parts(tc.v)
		if !testref.Close(got[1], bias, half+1e-6, 0) || !testref.Close(got[4], words, half+1e-6, 0) {
			t.Errorf("%s: %q: output bias %+.5f and word weights %+.5f from the model's weights", tc.name, mt[0], bias, words)
		}
		if math.Abs(words) < 10*half {
			t.Errorf("%s: word weights %+.5f too small to tell apart from zero: the check checks little", tc.name, words)
		}
	}
	code, out, stderr := tt(t, "explain", "--model", model, "--text", text, "--color", "never", "--method", "ig")
	if code != 0 {
		t.Fatalf("explain --method ig: exit %d: %s", code, stderr)
	}
	mt := wideIGLine.FindStringSubmatch(out)
	if mt == nil {
		t.Fatalf("integrated gradients: no baseline naming the unknown word's weight:\n%s", out)
	}
	got := testref.Floats(t, mt) // value, baseline, words
	_, words := parts(logOdds)
	if !testref.Close(got[2], words, half+1e-6, 0) {
		t.Errorf("%q: word weights %+.5f from the model's weights", mt[0], words)
	}
	// The baseline: the value with every word vector zero and every word
	// the unknown word, by a forward pass of the model so changed on a text
	// of as many unknown words.
	zero := m.Clone()
	clear(zero.Emb)
	unknown := make([]int32, len(ids))
	for i := range unknown {
		unknown[i] = corpus.UNK
	}
	lg := zero.Forward(unknown).Logits
	baseline := float64(lg[e.Class]) - float64(lg[e.RunnerUp])
	if !testref.Close(got[1], baseline, half+1e-5, 0) {
		t.Errorf("%q: the baseline is %+.5f by a forward pass with zero word vectors on unknown words", mt[0], baseline)
	}
	if !testref.Close(got[0], e.LogOdds.Value, half, 0) {
		t.Errorf("%q: the value is %+.5f in --json", mt[0], e.LogOdds.Value)
	}
}
