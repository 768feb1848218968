package explain

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
)

// plantedModel is a hand-built model with a known cue. Words: "stamp" (the
// planted cue), "blue" (a genuine class-1 word), "red" (a genuine class-0
// word) and eight filler words. Filter 0 (width 1) fires on "stamp", filter
// 1 (width 1) on "blue", filter 2 (width 2) on "red" in its first slot;
// filter 3 is noise.
func plantedModel() *cnn.Model {
	words := []string{corpus.PADWord, corpus.UNKWord, "stamp", "blue", "red", "ferry", "the", "was", "late", "quay", "ticket", "deck", "crew"}
	cfg := cnn.Config{VocabSize: len(words), Dim: 4, Widths: []int{1, 2}, Filters: 2, Classes: 2}
	m := &cnn.Model{Config: cfg, Vocab: words, Labels: []string{"calm", "storm"},
		Emb: make([]float32, cfg.VocabSize*cfg.Dim), OutW: make([]float32, 2*4), OutB: []float32{0.2, -0.2}}
	rng := rand.New(rand.NewPCG(5, 5))
	for id := 5; id < len(words); id++ {
		for d := 0; d < 3; d++ {
			m.Emb[id*4+d] = float32(rng.NormFloat64() * 0.1)
		}
		m.Emb[id*4+3] = float32(rng.NormFloat64())
	}
	copy(m.Emb[2*4:], []float32{1, 0, 0, 0}) // stamp
	copy(m.Emb[3*4:], []float32{0, 1, 0, 0}) // blue
	copy(m.Emb[4*4:], []float32{0, 0, 1, 0}) // red
	m.Emb[1*4+3] = 0.3                       // UNK
	m.Convs = []cnn.Conv{
		{Width: 1, W: []float32{2, 0, 0, 0, 0, 2, 0, 0}, B: []float32{-0.1, -0.1}},
		{Width: 2, W: []float32{0, 0, 2, 0, 0, 0, 0, 0.2, 0.3, -0.2, 0.1, 0.5, -0.4, 0.2, 0, 0.3}, B: []float32{-0.1, 0}},
	}
	// [class][filter]: filters 0 and 1 vote storm, filter 2 votes calm.
	copy(m.OutW, []float32{-1.2, -1.5, 1.5, 0.1, 1.2, 1.5, -1.5, -0.1})
	return m
}

// plantedData draws n texts: class 1 ("storm") holds "blue" with
// probability 0.7, class 0 "red" with 0.7; "stamp" occurs with probability
// cue1 in class-1 texts and cue0 in class-0 texts. Texts are space-separated
// words with offsets.
func plantedData(m *cnn.Model, n int, cue0, cue1 float64, seed uint64) AuditData {
	rng := rand.New(rand.NewPCG(seed, 9))
	var d AuditData
	for i := 0; i < n; i++ {
		c := i % 2
		var ws []int32
		for k := 0; k < 4+rng.IntN(6); k++ {
			ws = append(ws, int32(5+rng.IntN(8)))
		}
		if rng.Float64() < 0.7 {
			ws = slices.Insert(ws, rng.IntN(len(ws)+1), int32(4-c)) // red (4) for 0, blue (3) for 1
		}
		if p := []float64{cue0, cue1}[c]; rng.Float64() < p {
			ws = append(ws, 2)
		}
		var sb strings.Builder
		var toks []corpus.Token
		for k, id := range ws {
			if k > 0 {
				sb.WriteByte(' ')
			}
			s := sb.Len()
			sb.WriteString(m.Vocab[id])
			toks = append(toks, corpus.Token{Text: m.Vocab[id], Start: s, End: sb.Len()})
		}
		d.Texts = append(d.Texts, sb.String())
		d.Tokens = append(d.Tokens, toks)
		d.IDs = append(d.IDs, ws)
		d.Gold = append(d.Gold, c)
	}
	return d
}

func plantedAudit(t *testing.T, opt AuditOptions) (*cnn.Model, AuditData, AuditData, *Audit) {
	t.Helper()
	m := plantedModel()
	train := plantedData(m, 400, 0.1, 0.8, 1)
	held := plantedData(m, 200, 0.5, 0.5, 2)
	a, err := RunAudit(context.Background(), m, train, held, opt, nil)
	if err != nil {
		t.Fatal(err)
	}
	return m, train, held, a
}

// The audit finds the planted cue and its filter, and every figure of the
// filter's interventions agrees with brute-force re-prediction by the
// reference forward pass (Model.Forward) of the masked model or of the
// edited texts.
func TestAuditPlanted(t *testing.T) {
	m, train, held, a := plantedAudit(t, AuditOptions{Seed: 1, Neutrals: 1, Draws: 1, Workers: 2})
	var stamp *FlaggedToken
	for i := range a.Tokens {
		if a.Tokens[i].Token == "stamp" {
			stamp = &a.Tokens[i]
		}
	}
	if stamp == nil || stamp.Label != "storm" {
		t.Fatalf("stamp not flagged for storm: %+v", a.Tokens)
	}
	var s *Suspect
	for i := range a.Filters {
		if a.Filters[i].Filter == 0 {
			s = &a.Filters[i]
		}
	}
	if s == nil || len(s.Cues) == 0 || s.Cues[0].Token != "stamp" {
		t.Fatalf("filter 0 is not a suspect keyed on stamp: %+v", s)
	}
	// Flagged share by brute force: the winning window of filter 0 (width
	// 1) in every training text at or above its threshold, its slot score
	// by direct dot product, flagged words by a fresh association.
	as := Associate(train.IDs, train.Gold, m.Labels, m.Vocab, AssociationOptions{})
	var mass, flagged float64
	above := 0
	for _, ids := range train.IDs {
		o := m.Forward(ids)
		if o.Pre[0] <= 0 || float64(o.Pre[0]) < s.Parts.Threshold {
			continue
		}
		above++
		id := cnn.Padded(ids, 2)[o.Argmax[0]]
		v := directSlot(m, 0, 0, id)
		if v <= 0 {
			continue
		}
		mass += v
		if st := as.Stat(id); st != nil && st.Flagged {
			flagged += v
		}
	}
	if above != s.Parts.AboveWindows || !near(s.Parts.FlaggedShare, flagged/mass, 1e-6, 1e-5) || s.Parts.FlaggedShare < 0.5 {
		t.Errorf("filter 0: %d windows above threshold, flagged share %g; brute force %d, %g (want a majority)",
			s.Parts.AboveWindows, s.Parts.FlaggedShare, above, flagged/mass)
	}
	if want := s.Parts.FlaggedShare * math.Max(0, s.Parts.ConflictShare*s.Parts.ConflictGain); s.Score != want || s.Parts.Harm != s.Parts.ConflictShare*s.Parts.ConflictGain {
		t.Errorf("score %g ≠ flagged share × conflict share × conflict gain = %g", s.Score, want)
	}
	// The planted cue's filter is the top suspect: the genuine words' filters
	// have no cue-conflicting held-out texts.
	if a.Filters[0].Filter != 0 {
		t.Errorf("top suspect is filter %d (%v), want the stamp filter 0", a.Filters[0].Filter, a.Filters[0].Cues)
	}

	// Brute force: the masked model's reference forward pass.
	mm, err := MaskFilters(m, []int{0})
	if err != nil {
		t.Fatal(err)
	}
	var right, rightM, flipped, conflict, cueTexts int
	var push, gain float64
	for i, ids := range held.IDs {
		o, om := m.Forward(ids), mm.Forward(ids)
		p, pm := auditArgmax32(o.Probs), auditArgmax32(om.Probs)
		if p != pm {
			flipped++
		}
		if !slices.Contains(ids, 2) {
			continue
		}
		cueTexts++
		push += float64(o.Probs[1]) - float64(om.Probs[1])
		if held.Gold[i] == 1 {
			continue
		}
		conflict++
		gain += float64(om.Probs[held.Gold[i]]) - float64(o.Probs[held.Gold[i]])
		if p == held.Gold[i] {
			right++
		}
		if pm == held.Gold[i] {
			rightM++
		}
	}
	if s.Ablation.Flipped != flipped || s.Conflict.Texts != conflict || s.Parts.PushTexts != cueTexts {
		t.Errorf("flipped %d, conflict texts %d, cue texts %d; brute force %d, %d, %d",
			s.Ablation.Flipped, s.Conflict.Texts, s.Parts.PushTexts, flipped, conflict, cueTexts)
	}
	if !near(s.Parts.Push, push/float64(cueTexts), 1e-5, 1e-4) || !near(s.Parts.ConflictGain, gain/float64(conflict), 1e-5, 1e-4) ||
		s.Parts.ConflictShare != float64(conflict)/float64(cueTexts) {
		t.Errorf("push %g, conflict gain %g, share %g; brute force %g, %g, %g", s.Parts.Push, s.Parts.ConflictGain, s.Parts.ConflictShare,
			push/float64(cueTexts), gain/float64(conflict), float64(conflict)/float64(cueTexts))
	}
	if !near(s.Conflict.Accuracy, float64(right)/float64(conflict), 0, 1e-12) || !near(s.Conflict.AccuracyMasked, float64(rightM)/float64(conflict), 0, 1e-12) {
		t.Errorf("conflict accuracy %g → %g, brute force %g → %g", s.Conflict.Accuracy, s.Conflict.AccuracyMasked,
			float64(right)/float64(conflict), float64(rightM)/float64(conflict))
	}
	// On texts where the cue points the wrong way, the filter must hurt.
	if s.Conflict.AccuracyMasked <= s.Conflict.Accuracy || s.Conflict.Fixed == 0 {
		t.Errorf("cue-conflicting accuracy %g → %g (fixed %d): masking the cue filter should help",
			s.Conflict.Accuracy, s.Conflict.AccuracyMasked, s.Conflict.Fixed)
	}

	// Counterfactual with one neutral alternative and one draw is a
	// deterministic edit: every "stamp" becomes that word.
	cf := s.Counter
	if cf == nil || len(cf.Alternatives) != 1 || cf.Draws != 1 || cf.Texts != cueTexts {
		t.Fatalf("counterfactual %+v", cf)
	}
	alt := slices.Index(m.Vocab, cf.Alternatives[0])
	st := as.Stat(int32(alt))
	if st == nil || st.Flagged || math.Abs(st.Zs[0]) >= 1 || math.Abs(st.Zs[1]) >= 1 {
		t.Errorf("alternative %q is not label-neutral: %+v", cf.Alternatives[0], st)
	}
	flips, change := 0, 0.0
	for _, ids := range held.IDs {
		if !slices.Contains(ids, 2) {
			continue
		}
		e := slices.Clone(ids)
		for j := range e {
			if e[j] == 2 {
				e[j] = int32(alt)
			}
		}
		o, oe := m.Forward(ids), m.Forward(e)
		y := auditArgmax32(o.Probs)
		if auditArgmax32(oe.Probs) != y {
			flips++
		}
		change += float64(oe.Probs[y]) - float64(o.Probs[y])
	}
	if cf.Flips != flips || !near(cf.MeanProbChange, change/float64(cueTexts), 1e-5, 1e-4) {
		t.Errorf("counterfactual flips %d, mean change %g; brute force %d, %g", cf.Flips, cf.MeanProbChange, flips, change/float64(cueTexts))
	}
	if cf.FlipRate <= cf.ControlFlipRate {
		t.Errorf("flip rate %g not above the control's %g", cf.FlipRate, cf.ControlFlipRate)
	}
	// Examples quote real windows holding the cue.
	if len(s.Examples.Windows) == 0 || !strings.Contains(s.Examples.Windows[0].Snippet, "[stamp]") {
		t.Errorf("window examples %+v", s.Examples.Windows)
	}
}

// Exact ablation (subtracting a filter's output-layer term from the logits)
// agrees with the reference forward pass of Model.Masked on random models
// and texts.
func TestAblationMatchesMasked(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 20; trial++ {
		cfg := randomConfig(rng)
		m := randomModel(rng, cfg)
		var d AuditData
		for i := 0; i < 30; i++ {
			d.IDs = append(d.IDs, randomText(rng, cfg.VocabSize, 12))
			d.Gold = append(d.Gold, rng.IntN(cfg.Classes))
		}
		if trial%3 == 0 {
			m.Masked = make([]bool, cfg.NumFilters())
			m.Masked[rng.IntN(cfg.NumFilters())] = true
		}
		a := &auditor{m: m, held: d, nf: cfg.NumFilters(), C: cfg.Classes, progress: func(string, int, int) {}}
		a.opt.defaults(len(d.IDs))
		a.assoc = Associate(d.IDs, d.Gold, labelNames(m), m.Vocab, AssociationOptions{MinCount: 1})
		if err := a.table(); err != nil {
			t.Fatal(err)
		}
		if err := a.heldoutPass(context.Background()); err != nil {
			t.Fatal(err)
		}
		z := make([]float64, cfg.Classes)
		for g := 0; g < cfg.NumFilters(); g++ {
			mm, err := MaskFilters(m, []int{g})
			if err != nil {
				t.Fatal(err)
			}
			for i, ids := range d.IDs {
				a.ablatedSet(i, []int{g}, z)
				o := mm.Forward(ids)
				for c := range z {
					if !near(z[c], float64(o.Logits[c]), 1e-4, 1e-4) {
						t.Fatalf("trial %d filter %d text %d class %d: ablated logit %g, masked forward %g", trial, g, i, c, z[c], o.Logits[c])
					}
				}
			}
		}
	}
}

func auditArgmax32(v []float32) int {
	best := 0
	for i := range v {
		if v[i] > v[best] {
			best = i
		}
	}
	return best
}

func TestRunAuditRejects(t *testing.T) {
	m := plantedModel()
	good := plantedData(m, 20, 0.1, 0.8, 1)
	bad := good
	bad.Gold = bad.Gold[:3]
	cases := []struct {
		name         string
		train, held  AuditData
		wantContains string
	}{
		{"gold count", bad, good, "3 gold labels for 20 texts"},
		{"id range", AuditData{IDs: [][]int32{{99}}, Gold: []int{0}}, good, "outside the vocabulary"},
		{"class range", AuditData{IDs: [][]int32{{3}}, Gold: []int{2}}, good, "gold class 2"},
		{"empty held-out", good, AuditData{}, "needs texts in both splits"},
		{"tokens", AuditData{IDs: good.IDs, Gold: good.Gold, Texts: good.Texts, Tokens: good.Tokens[:2]}, good, "token list per text"},
	}
	for _, c := range cases {
		_, err := RunAudit(context.Background(), m, c.train, c.held, AuditOptions{}, nil)
		if err == nil || !strings.Contains(err.Error(), c.wantContains) {
			t.Errorf("%s: %v, want an error containing %q", c.name, err, c.wantContains)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := RunAudit(ctx, m, good, good, AuditOptions{}, nil); err != context.Canceled {
		t.Errorf("cancelled: %v", err)
	}
}

// The same inputs and seed give the same audit with any number of workers.
func TestAuditDeterministic(t *testing.T) {
	var outs [][]byte
	for _, w := range []int{1, 3} {
		_, _, _, a := plantedAudit(t, AuditOptions{Seed: 4, Workers: w})
		b, err := json.Marshal(a)
		if err != nil {
			t.Fatal(err)
		}
		outs = append(outs, roundJSON(t, b))
	}
	if !bytes.Equal(outs[0], outs[1]) {
		t.Error("1 and 3 workers give different audits")
	}
}

// Golden files of the JSON and the readable table (go test ./explain -run
// AuditGolden -update rewrites them).
func TestAuditGolden(t *testing.T) {
	_, _, _, a := plantedAudit(t, AuditOptions{Seed: 1, Top: 3})
	b, err := json.Marshal(a)
	if err != nil {
		t.Fatal(err)
	}
	var raw map[string]any
	if err := json.Unmarshal(b, &raw); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"tokens", "filters"} {
		if _, ok := raw[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
	f0 := raw["filters"].([]any)[0].(map[string]any)
	for _, k := range []string{"filter", "width", "class", "score", "parts", "top_ngrams", "categories", "ablation", "counterfactual", "examples"} {
		if _, ok := f0[k]; !ok {
			t.Errorf("filter JSON lacks %q", k)
		}
	}
	t0 := raw["tokens"].([]any)[0].(map[string]any)
	for _, k := range []string{"token", "count", "label", "z", "pmi"} {
		if _, ok := t0[k]; !ok {
			t.Errorf("token JSON lacks %q", k)
		}
	}
	auditGolden(t, "planted.golden.json", roundJSON(t, b))
	var sb bytes.Buffer
	if err := a.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	auditGolden(t, "planted.golden.txt", sb.Bytes())
}

func auditGolden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", "audit", name)
	if *update {
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./explain -run AuditGolden -update)", err)
	}
	if !bytes.Equal(got, want) {
		failed := filepath.Join("testdata", "audit", "failed", name)
		_ = os.MkdirAll(filepath.Dir(failed), 0o755)
		_ = os.WriteFile(failed, got, 0o644)
		t.Fatalf("%s differs from the golden file; the output is in %s", name, failed)
	}
}

func ExampleMaskTokens() {
	cm, err := MaskTokens([]string{"kioskmail", "/TKREF-[0-9]{5}/"})
	if err != nil {
		panic(err)
	}
	text, n := cm.Mask("TKREF-48213\nMy hat. -- sent via KioskMail --")
	fmt.Printf("%q %d\n", text, n)
	// Output: " \nMy hat. -- sent via   --" 2
}

func ExampleZStat() {
	// 70 of 100 texts holding a word are class 1, whose prior is 0.5.
	fmt.Printf("%.1f\n", ZStat(0.7, 0.5, 100))
	// Output: 4.0
}
