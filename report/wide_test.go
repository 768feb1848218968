package report

import (
	"bytes"
	"fmt"
	"html"
	"math"
	"math/rand/v2"
	"regexp"
	"strings"
	"testing"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/testref"
)

// wideIdentity reads back the identity line of an explained text of a model
// with the wide path: the log-odds, the output bias with the unknown word's
// weight, the filter biases, the token shares and the word weights of them.
var wideIdentity = regexp.MustCompile(`^log p\(.+\)/p\(.+\) (-?[0-9.]+|\+[0-9.]+) = output bias with the unknown word's weight (\S+) \+ filter biases (\S+) \+ token shares (\S+) \(word weights (\S+)\)$`)

// TestExampleIdentityWide: the identity line of an explained text of a
// model with the wide path (the demo fixture's model given a wide table of
// seeded weights, PAD's row zero) names the unknown word's weight in the
// output bias and the word weights in the token shares. Its numbers, read
// back, add up to the log-odds written, and the output bias and the word
// weights are those computed here from the weights, Σ_c v_c·(OutB[c] +
// Wide[UNK][c]) and Σ_i Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N with v =
// e_label − e_runner-up (the split documented in explain.Shares). The page
// shows the line. Every number is written to 3 decimals: off by 5e-4 at
// most.
func TestExampleIdentityWide(t *testing.T) {
	d := loadDemo(t)
	m, text, ids, e := wideExplained(t, d)
	C := m.Config.Classes
	ev, err := example(Input{Model: m}, Example{Kind: KindCorrect, Text: text, Gold: e.Label, Explanation: e})
	if err != nil {
		t.Fatal(err)
	}
	mt := wideIdentity.FindStringSubmatch(ev.Identity)
	if mt == nil {
		t.Fatalf("identity line %q does not name the wide path's parts", ev.Identity)
	}
	got := testref.Floats(t, mt) // log-odds, bias, filter biases, tokens, words
	const half = 5e-4
	if !testref.Close(got[0], got[1]+got[2]+got[3], 4*half, 0) {
		t.Errorf("%q does not add up (%g)", ev.Identity, got[1]+got[2]+got[3])
	}
	unk := int(corpus.UNK) * C
	var bias, words float64
	n := 0
	for _, id := range ids {
		if id != corpus.PAD {
			n++
		}
	}
	for c := range C {
		vc := 0.0
		switch c {
		case e.Class:
			vc = 1
		case e.RunnerUp:
			vc = -1
		}
		bias += vc * (float64(m.OutB[c]) + float64(m.Wide[unk+c]))
		for _, id := range ids {
			if id != corpus.PAD {
				words += vc * (float64(m.Wide[int(id)*C+c]) - float64(m.Wide[unk+c])) / float64(n)
			}
		}
	}
	if !testref.Close(got[1], bias, half+1e-6, 0) || !testref.Close(got[4], words, half+1e-6, 0) {
		t.Errorf("%q: output bias %+.5f and word weights %+.5f from the weights", ev.Identity, bias, words)
	}
	if math.Abs(words) < 10*half {
		t.Errorf("word weights %+.5f too small to tell apart from zero: the check checks little", words)
	}
	// The page shows the line.
	in := d.input
	in.Model = m
	in.Examples = []Example{{Kind: KindCorrect, Text: text, Gold: e.Label, Explanation: e}}
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := r.WriteHTML(&buf); err != nil {
		t.Fatal(err)
	}
	page := html.UnescapeString(buf.String())
	if !strings.Contains(page, `<div class="identity">`+ev.Identity+`</div>`) {
		t.Errorf("the page does not show %q", ev.Identity)
	}
	// The training recipe names the word weights (and, for the model
	// without them, does not).
	const lead, row = "a weight per word and label, averaged over the text, adds to the logits", "Word weights beside the filters"
	if !strings.Contains(page, "the part from those words' word weights") {
		t.Error("the page does not say that a kept-down window's measured change has a part from the word weights")
	}
	if len(e.KeptDown) == 0 {
		t.Fatal("no window kept down in the example: the table is not checked")
	}
	for _, kd := range e.KeptDown {
		own, others, words, whole := kd.Parts(e.LogOdds.Value)
		cells := `<td class="num">` + strings.Join([]string{signed(kd.Effect), signed(own), signed(others), signed(words), signed(whole), signed(kd.Drop)}, `</td><td class="num">`) + `</td>`
		if !strings.Contains(page, cells) {
			t.Errorf("kept-down window of filter %d: the page has no row %s", kd.Filter, cells)
		}
	}
	if !strings.Contains(page, lead) || !strings.Contains(page, row) {
		t.Errorf("the page's recipe does not name the word weights (%q, %q)", lead, row)
	}
	if p := recipe(d.input); p.Wide || len(p.Arch) != len(recipe(Input{Model: m}).Arch)-1 {
		t.Errorf("the model without word weights: wide %v, %d architecture rows", p.Wide, len(p.Arch))
	}
}

// wideExplained gives the demo fixture's model a wide table of seeded
// weights (PAD's row zero) and explains one text with it.
func wideExplained(t *testing.T, d demoFixture) (m *cnn.Model, text string, ids []int32, e *explain.Explanation) {
	t.Helper()
	m = d.model.Clone()
	C := m.Config.Classes
	m.Config.Wide = true
	m.Wide = make([]float32, m.Config.VocabSize*C)
	rng := rand.New(rand.NewPCG(5, 11))
	for i := C; i < len(m.Wide); i++ {
		m.Wide[i] = float32(rng.NormFloat64())
	}
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		t.Fatal(err)
	}
	v := corpus.NewVocab(m.Vocab, nil)
	text = "My ticket was lost and the ferry left without me, a zqxj refund please."
	toks := tok.TokenizeFor(v, text)
	ids = v.Encode(toks)
	if e, err = explain.Explain(m, toks, ids, explain.ExplainOptions{Occlusion: true, KeptDown: 3}); err != nil {
		t.Fatal(err)
	}
	return m, text, ids, e
}

// TestAttributionTableWordWeights: for a model with word weights the
// attribution table adds word_log_odds and word_centred_<label>, the
// explanation's word parts of the token shares; for one without, it has
// no such columns.
func TestAttributionTableWordWeights(t *testing.T) {
	d := loadDemo(t)
	m, _, _, e := wideExplained(t, d)
	tb := AttributionTable([]*explain.Explanation{e})
	col := map[string]int{}
	for i, c := range tb.Columns {
		col[c] = i
	}
	last := m.Labels[len(m.Labels)-1]
	for _, name := range []string{"word_log_odds", "word_centred_" + last} {
		if _, ok := col[name]; !ok {
			t.Fatalf("column %q missing from %v", name, tb.Columns)
		}
	}
	nonzero := 0
	for i, row := range tb.Rows {
		w := row[col["word_log_odds"]].(float64)
		if w != e.LogOdds.Words[i] || row[col["word_centred_"+last]].(float64) != e.Centred[len(m.Labels)-1].Words[i] {
			t.Errorf("token %d: row %v, explanation word parts %v, %v", i, row, e.LogOdds.Words[i], e.Centred[len(m.Labels)-1].Words[i])
		}
		if w != 0 {
			nonzero++
		}
	}
	if nonzero == 0 {
		t.Error("every word part is zero: the check checks little")
	}
	var es []*explain.Explanation
	for _, ex := range d.input.Examples {
		es = append(es, ex.Explanation)
	}
	for _, c := range AttributionTable(es).Columns {
		if strings.HasPrefix(c, "word_") {
			t.Errorf("a model without word weights exports column %q", c)
		}
	}
}

// TestAuditWordWeights: on an audit of a model with word weights, the
// report's action and cue evidence name the words the mask reads as the
// unknown word and the cue words' part of the label's centred logit with
// its interval, and no `telltale mask` command is offered (it masks filters
// only); without word weights neither appears and the command is offered.
// Invented figures: only the wording is checked.
func TestAuditWordWeights(t *testing.T) {
	iv := audit.Interval{Estimate: 0.8, Low: 0.7, High: 0.9}
	tried := &audit.Ablation{Filters: []int{3, 5}, Words: []string{"kioskmail", "quayside"}, Texts: 100, Before: iv, After: iv}
	cue := audit.Candidate{Words: []string{"kioskmail", "quayside"}, Text: "kioskmail quayside", Label: "lost", Verdict: audit.VerdictActed,
		Filters: &audit.Filters{Keyed: []int{3, 5}, Ablation: tried, Words: []string{"kioskmail", "quayside"},
			WordPart: &audit.Interval{Estimate: 0.876, Low: 0.846, High: 0.904}}}
	r := &audit.Result{Labels: []string{"lost", "other"}, Ranked: []audit.Candidate{cue},
		Action: audit.Action{Cues: []string{cue.Text}, Patterns: []string{"kioskmail"}, Mask: []int{3, 5}, MaskWords: tried.Words, Tried: tried}}
	for _, wide := range []bool{true, false} {
		if !wide {
			r.Action.MaskWords, tried.Words = nil, nil
			r.Ranked[0].Filters.Words, r.Ranked[0].Filters.WordPart = nil, nil
		}
		av := actionLayout(r, "m.tt")
		ev := DescribeCue(&r.Ranked[0], r, []float64{0.5, 0.5})
		named := strings.Contains(av.Mask, "'kioskmail', 'quayside' read as the unknown word by the word weights")
		part := strings.Contains(ev.Filters, "add 0.876 (0.846–0.904) to the centred logit of lost")
		if named != wide || part != wide || (av.MaskCommand == "") != wide {
			t.Errorf("word weights %v: action %q, command %q, cue %q", wide, av.Mask, av.MaskCommand, ev.Filters)
		}
	}
}

// TestRecipeWideBigrams: the recipe of a model with bigram weights (the
// demo fixture's model with a wide table and the bigram set of one text)
// names them with the number of pairs, and the page's lead sentence says
// that the mean runs over word pairs too; a model without them has
// neither.
func TestRecipeWideBigrams(t *testing.T) {
	d := loadDemo(t)
	m, _, ids, _ := wideExplained(t, d)
	if p := recipe(Input{Model: m}); p.Bigrams {
		t.Error("a model without bigram weights: the recipe says it has them")
	}
	keys := cnn.CollectBigrams([][]int32{ids})
	if err := m.SetBigrams(keys); err != nil {
		t.Fatal(err)
	}
	p := recipe(Input{Model: m})
	want := fmt.Sprintf("yes: %d pairs of adjacent words of the training split", len(keys))
	found := false
	for _, r := range p.Arch {
		found = found || (r.Key == "Word-pair weights" && strings.HasPrefix(r.Value, want))
	}
	if !p.Bigrams || !found || len(keys) == 0 {
		t.Errorf("recipe of a model with %d bigrams: bigrams %v, architecture %v", len(keys), p.Bigrams, p.Arch)
	}
	in := d.input
	in.Model = m
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := r.WriteHTML(&buf); err != nil {
		t.Fatal(err)
	}
	if page := html.UnescapeString(buf.String()); !strings.Contains(page, "a weight per word and label and per pair of adjacent words seen in training, averaged over the text") {
		t.Error("the page's lead does not name the word-pair weights")
	}
}

// TestRecipeWideFit: the recipe of a model whose word weights started at
// their fitted logistic regression (cnn.TrainConfig.WideFit) says so among
// the training settings, with its C fixed or chosen on dev; one trained
// without it, or without word weights, has no such row.
func TestRecipeWideFit(t *testing.T) {
	hasRow := func(wide, fit bool) bool {
		m := &cnn.Model{Config: cnn.Config{Widths: []int{3}, Wide: wide}, Info: cnn.Info{Recipe: &cnn.TrainConfig{WideFit: fit}}}
		for _, r := range recipe(Input{Model: m}).Train {
			if r.Key == "Start of the word weights" && strings.Contains(r.Value, "logistic regression") {
				return true
			}
		}
		return false
	}
	if !hasRow(true, true) || hasRow(true, false) || hasRow(false, true) {
		t.Errorf("the fitted start's row: with it %v, without it %v, without word weights %v; want true, false, false",
			hasRow(true, true), hasRow(true, false), hasRow(false, true))
	}
	// Its C: fixed in the recipe (cnn.TrainConfig.WideFitC), or chosen on
	// dev (0).
	for _, c := range []struct {
		c    float64
		want string
	}{{10, "(C 10, fixed)"}, {0.25, "(C 0.25, fixed)"}, {0, "(C chosen on the dev split)"}} {
		m := &cnn.Model{Config: cnn.Config{Widths: []int{3}, Wide: true}, Info: cnn.Info{Recipe: &cnn.TrainConfig{WideFit: true, WideFitC: c.c}}}
		found := false
		for _, r := range recipe(Input{Model: m}).Train {
			if r.Key == "Start of the word weights" {
				found = true
				if !strings.Contains(r.Value, c.want) {
					t.Errorf("C %g: the row says %q, want it to say %q", c.c, r.Value, c.want)
				}
			}
		}
		if !found {
			t.Errorf("C %g: no row for the fitted start", c.c)
		}
	}
}

// TestRecipeKeepFromAndClassWeight: the training settings name the first
// epoch the run could keep (cnn.TrainConfig.KeepFrom, one beyond the
// epochs meaning the last) and the class weight.
func TestRecipeKeepFromAndClassWeight(t *testing.T) {
	for _, c := range []struct {
		tc       cnn.TrainConfig
		keep, cw string
	}{
		{cnn.TrainConfig{Epochs: 20}, "any", "none"},
		{cnn.TrainConfig{Epochs: 20, KeepFrom: 1}, "any", "none"},
		{cnn.TrainConfig{Epochs: 20, KeepFrom: 5, ClassWeight: "balanced"}, "5 (no earlier epoch)", "balanced"},
		{cnn.TrainConfig{Epochs: 3, KeepFrom: 5}, "3 (no earlier epoch)", "none"},
	} {
		m := &cnn.Model{Config: cnn.Config{Widths: []int{3}}, Info: cnn.Info{Recipe: &c.tc}}
		got := map[string]string{}
		for _, r := range recipe(Input{Model: m}).Train {
			got[r.Key] = r.Value
		}
		if got["First epoch it could keep"] != c.keep || got["Class weight"] != c.cw {
			t.Errorf("%+v: first epoch %q, class weight %q; want %q, %q", c.tc, got["First epoch it could keep"], got["Class weight"], c.keep, c.cw)
		}
	}
}

// TestRecipeShrinkAndAverages: a shrunk fitted start names its factor, and
// the kept epoch's row says when the kept weights are an average of
// iterates (cnn.TrainConfig.WeightAverage) or of epoch ends (AverageLast).
func TestRecipeShrinkAndAverages(t *testing.T) {
	for _, c := range []struct {
		tc          cnn.TrainConfig
		start, kept string
	}{
		{cnn.TrainConfig{WideFit: true}, "the logistic regression", "4"},
		{cnn.TrainConfig{WideFit: true, WideFitShrink: 0.5}, "0.5 × the logistic regression", "4"},
		{cnn.TrainConfig{WeightAverage: 2}, "", "4 (their moving average over the steps, a horizon of 2 epochs)"},
		{cnn.TrainConfig{WeightAverage: 1}, "", "4 (their moving average over the steps, a horizon of 1 epoch)"},
		{cnn.TrainConfig{AverageLast: 3}, "", "4 (the mean of the weights at the ends of the last 3 epochs)"},
	} {
		m := &cnn.Model{Config: cnn.Config{Widths: []int{3}, Wide: true}, Info: cnn.Info{Recipe: &c.tc, BestEpoch: 4}}
		got := map[string]string{}
		for _, r := range recipe(Input{Model: m}).Train {
			got[r.Key] = r.Value
		}
		if start := got["Start of the word weights"]; !strings.HasPrefix(start, c.start) || (c.start == "") != (start == "") {
			t.Errorf("%+v: start %q, want it to begin %q", c.tc, start, c.start)
		}
		if got["Weights kept from epoch"] != c.kept {
			t.Errorf("%+v: kept %q, want %q", c.tc, got["Weights kept from epoch"], c.kept)
		}
	}
}

// The report's McNemar line says what to try where the baseline is
// significantly ahead (cnn.BaselineRemedies), and only there.
func TestMcNemarLineBaselineAhead(t *testing.T) {
	m := &cnn.Model{Config: cnn.Config{Wide: true}, Info: cnn.Info{Recipe: &cnn.TrainConfig{}}}
	ahead := mcnemarLine(m, cnn.BaselineTest{CNNOnly: 5, BaselineOnly: 20, P: 0.0041})
	level := mcnemarLine(m, cnn.BaselineTest{CNNOnly: 17, BaselineOnly: 29, P: 0.1})
	cnnAhead := mcnemarLine(m, cnn.BaselineTest{CNNOnly: 20, BaselineOnly: 5, P: 0.0041})
	const advice = "The baseline is ahead here: retrain with telltale train --wide-fit ("
	if !strings.Contains(ahead, advice) || !strings.Contains(ahead, "--class-weight balanced") || !strings.HasSuffix(ahead, "beside the result.") {
		t.Errorf("ahead: %q", ahead)
	}
	if strings.Contains(level, "ahead here") || strings.Contains(cnnAhead, "ahead here") {
		t.Errorf("not significant: %q\nthe CNN ahead: %q", level, cnnAhead)
	}
	if !strings.HasPrefix(level, "The CNN is right on 17 texts") {
		t.Errorf("the line does not open with the test: %q", level)
	}
}

// TestAuditWordPartTooFew: below the audit's minimum of texts (the
// audit leaves Filters.WordPart nil, as it leaves a reliance unmeasured)
// the cue's evidence names its words and says, in the reliance's words,
// that there were too few texts to measure, with no figure or interval.
func TestAuditWordPartTooFew(t *testing.T) {
	cue := audit.Candidate{Words: []string{"215"}, Text: "215", Label: "spam", Verdict: audit.VerdictActed,
		Confirmed: &audit.Reliance{Texts: 4},
		Filters:   &audit.Filters{Words: []string{"215"}, WordTexts: 4}}
	r := &audit.Result{Labels: []string{"ham", "spam"}, Ranked: []audit.Candidate{cue}}
	ev := DescribeCue(&r.Ranked[0], r, nil)
	if want := "too few texts (4) in the confirming half to measure"; !strings.Contains(ev.Reliance, want) ||
		!strings.Contains(ev.Filters, "'215': "+want) || strings.Contains(ev.Filters, " add ") {
		t.Errorf("word part over 4 texts: reliance %q, filters %q", ev.Reliance, ev.Filters)
	}
	if m := strings.Join(AuditMethod(r), " "); !strings.Contains(m, fmt.Sprintf("only when at least %d of its texts hold the cue", audit.MinCueTexts)) ||
		!strings.Contains(m, "the part of the cue's words there (the same percentile bootstrap over texts)") {
		t.Errorf("the method does not say how the word part is made, or its minimum: %q", m)
	}
}
