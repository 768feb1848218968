package gui

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/atomicfile"
)

// reflow undoes line breaks made for a terminal and keeps the ones that
// separate items, sentences and lead-ins.
func TestReflow(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"read by filters whose\nmasking raises it:\n  (1) the words", "read by filters whose masking raises it:\n  (1) the words"},
		{"one.\ntwo", "one.\ntwo"},
		{"lead:\nnext", "lead:\nnext"},
		{"a\n\nb", "a\n\nb"},
		{"exact McNemar\np < 0.05) and\nfix", "exact McNemar p < 0.05) and fix"},
		{"  (2) item\n      Masking all", "  (2) item Masking all"},
		{"against 0% (0–0%)\n     when the same words", "against 0% (0–0%) when the same words"},
		{"them:\n\n  1. the line\n  2. the word", "them:\n\n  1. the line\n  2. the word"},
		{"", ""},
	} {
		if got := reflow(c.in); got != c.want {
			t.Errorf("reflow(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// The audit's story (audit.Result.Story) reads in the window's words: the
// test split, sentences whole, and what to do here instead of the
// terminal's commands.
func TestWindowStory(t *testing.T) {
	r := &audit.Result{Ranked: []audit.Candidate{footer()}, ConfirmationTexts: 400, ModelFile: "ferry.tt", TrainFile: "train.csv",
		Action: audit.Action{Cues: []string{"sent via kioskmail"}, Patterns: []string{footer().Pattern}}}
	story := r.Story()
	if !strings.Contains(story, "telltale train") || !strings.Contains(story, "of the predictions on the texts that hold it, against 0% (0–0%)\n") {
		t.Fatalf("the audit's story no longer has what the window rewrites:\n%s", story)
	}
	got := windowStory(r)
	for _, bad := range []string{"held-out", "telltale", "ferry.tt", "train.csv", "kioskmail\\b"} {
		if strings.Contains(got, bad) {
			t.Errorf("the story shows %q:\n%s", bad, got)
		}
	}
	for _, want := range []string{"of the confirming test texts", "against 0% (0–0%) when the same words are put elsewhere",
		"What to do here: retrain without it and compare both models on the confirming half of the test split with and without it"} {
		if !strings.Contains(got, want) {
			t.Errorf("the story lacks %q:\n%s", want, got)
		}
	}
}

// footer is a cue the audit acted on, with the figures of its three
// questions.
func footer() audit.Candidate {
	rel := &audit.Reliance{Texts: 162, Measured: 162, Draws: 3,
		FlipRate:        audit.Interval{Estimate: 0.994, Low: 0.981, High: 1},
		ControlFlipRate: audit.Interval{},
		Decided:         audit.Interval{Estimate: 0.402, Low: 0.352, High: 0.45},
		Examples:        []audit.Example{{Index: 1, Snippet: "b [sent via kioskmail]", Gold: "praise", Pred: "lost-property", After: "praise"}}}
	return audit.Candidate{Words: []string{"sent", "via", "kioskmail"}, Text: "sent via kioskmail", Surface: "sent via\nKioskMail",
		Label: "lost-property", Class: 0, Association: audit.CueAssociation{Texts: 603, InLabel: 515, Share: 515.0 / 603, P: 1e-200, Adjusted: 1e-198},
		ArtifactLikeness: 0.996, Confirmed: rel, Verdict: audit.VerdictActed, Pattern: `/(?i)\bsent\s*via\s*kioskmail\b/`,
		Filters: &audit.Filters{Keyed: []int{11, 2}}}
}

// A cue's row shows the audit's numbers: the association share with its
// Wilson interval (audit.Wilson), the confirming half's rates with their
// intervals, the verdict in words.
func TestCueRow(t *testing.T) {
	c := footer()
	r := &audit.Result{Ranked: []audit.Candidate{c}}
	row := cueRow(r, &r.Ranked[0], 1)
	lo, hi := audit.Wilson(515, 603, 0.95)
	want := []string{"1", "sent via KioskMail", "lost-property", "acted on", "603",
		pct(515.0/603) + " (" + strings.TrimSuffix(pct(lo), "%") + "–" + pct(hi) + ")", "1.00",
		"99.4% (98.1–100.0%)", "0.0% (0.0–0.0%)", "40.2% (35.2–45.0%)"}
	if !slices.Equal(row, want) {
		t.Errorf("row\n %q\nwant\n %q", row, want)
	}
	c.Confirmed, c.Reliance = nil, c.Confirmed
	// Each of its three reliance figures is the choosing half's, and each
	// says so.
	if got := cueRow(r, &c, 2); !strings.HasSuffix(got[7], "(choosing half)") || !strings.HasSuffix(got[8], "(choosing half)") ||
		!strings.HasSuffix(got[9], "(choosing half)") {
		t.Errorf("a cue measured on the choosing half only does not say so in each of its reliance figures: %q", got[7:])
	}
	c.Reliance = nil
	if got := cueRow(r, &c, 2); got[7] != "—" || got[9] != "—" {
		t.Errorf("a cue not measured shows figures: %q", got)
	}
	if len(want) != len(cueCols) {
		t.Errorf("%d cells for %d columns", len(want), len(cueCols))
	}
}

// The examples behind a cue's reliance are the audit's, found in the test
// split by their index there (not their place in a half); the filters that read
// the cue follow.
func TestExamplesOf(t *testing.T) {
	c := footer()
	test := &corpus.Dataset{Examples: []corpus.Example{{Text: "a", Label: "praise"}, {Text: "b\nsent via kioskmail", Label: "praise"},
		{Text: "c", Label: "lost-property"}}}
	r := &audit.Result{Ranked: []audit.Candidate{c}, Labels: []string{"lost-property", "praise"},
		Selection: []int{1}, Confirmation: []int{2, 0}}
	a := newAuditState(r, &modelState{}, &corpusState{Train: &corpus.Dataset{}, Test: test}, nil)
	exs := a.examplesOf(0)
	if len(exs) != 3 || exs[0].Index != 1 || exs[0].Text != test.Examples[1].Text || exs[0].After != "praise" {
		t.Fatalf("examples %+v: want test text 1 (its index in the test split, not in a half) first", exs)
	}
	if exs[1].Filter != 11 || exs[2].Filter != 2 {
		t.Errorf("the filters that read the cue: %+v, want 11 then 2", exs[1:])
	}
	rows := exampleRows(exs)
	if rows[0][2] != "1" || rows[0][5] != "praise" || rows[1][2] != "filter 11" {
		t.Errorf("rows %q", rows)
	}
	if a.cueRankOf(11) != "1" || a.cueRankOf(5) != "—" || a.cuesOf(2) != "sent via KioskMail" {
		t.Errorf("filter 11 reads the cue of rank %s, filter 5 %s; filter 2 reads %q", a.cueRankOf(11), a.cueRankOf(5), a.cuesOf(2))
	}
}

// The two models are compared on the confirming half as it is and without the
// cues, with the audit's intervals and tests.
func TestRetrainRows(t *testing.T) {
	rt := &audit.Retrained{Texts: 800,
		Original:       audit.ModelPair{Before: audit.Interval{Estimate: 0.255, Low: 0.215, High: 0.3}, After: audit.Interval{Estimate: 0.9, Low: 0.88, High: 0.92}, OnlyBefore: 10, OnlyAfter: 300, P: 1e-40},
		Counterfactual: audit.ModelPair{Before: audit.Interval{Estimate: 0.325, Low: 0.281, High: 0.372}, After: audit.Interval{Estimate: 0.91, Low: 0.89, High: 0.93}, OnlyBefore: 7, OnlyAfter: 290, P: 0.0021}}
	want := [][]string{
		{"as it is", "800", "0.255 (0.215–0.300)", "0.900 (0.880–0.920)", "10", "300", "1e-40"},
		{"without the cues", "800", "0.325 (0.281–0.372)", "0.910 (0.890–0.930)", "7", "290", "0.0021"},
	}
	got := retrainRows(rt)
	for i := range want {
		if !slices.Equal(got[i], want[i]) {
			t.Errorf("row %d %q, want %q", i, got[i], want[i])
		}
	}
}

// The status line after retraining gives the exact McNemar test and both
// accuracies with their intervals, as the comparison's table does; a
// difference the test does not find (p ≥ 0.05) reads as none, not as a
// gain, and the verdict comes before the figures (a long line is cut at
// its end).
func TestRetrainedStatus(t *testing.T) {
	rt := &audit.Retrained{Texts: 400, Patterns: []string{"a", "b", "c"},
		Original: audit.ModelPair{Before: audit.Interval{Estimate: 0.87, Low: 0.833, High: 0.899},
			After: audit.Interval{Estimate: 0.895, Low: 0.861, High: 0.921}, OnlyBefore: 16, OnlyAfter: 26, P: 0.15}}
	want := "Retrained without 3 cues: accuracy on the confirming half not clearly different from the model audited's " +
		"(two-sided exact McNemar p = 0.15): 0.895 (0.861–0.921) against 0.870 (0.833–0.899), 95% intervals."
	if got := retrainedStatus(rt); got != want {
		t.Errorf("status\n %q\nwant\n %q", got, want)
	}
	for _, c := range []struct {
		only, onlyAfter int
		p               float64
		want            string
	}{
		{5, 30, 1e-5, "Retrained without 3 cues: accuracy on the confirming half higher than the model audited's (two-sided exact McNemar p = 1e-05): "},
		{30, 5, 1e-5, "Retrained without 3 cues: accuracy on the confirming half lower than the model audited's (two-sided exact McNemar p = 1e-05): "},
		{16, 26, 0.05, "Retrained without 3 cues: accuracy on the confirming half not clearly different from the model audited's (two-sided exact McNemar p = 0.05): "},
	} {
		rt.Original.OnlyBefore, rt.Original.OnlyAfter, rt.Original.P = c.only, c.onlyAfter, c.p
		if got := retrainedStatus(rt); !strings.HasPrefix(got, c.want) || strings.Contains(got, "\n") {
			t.Errorf("%d right only before, %d only after, p %g: %q, want it to start %q", c.only, c.onlyAfter, c.p, got, c.want)
		}
	}
}

// Retraining needs the recipe that trained the model and the splits it was
// trained on.
func TestRetrainRecipe(t *testing.T) {
	rec := cnn.SplitRecord{Data: "d.csv", DevFrac: 0.1, TestFrac: 0.2, Seed: 1, Examples: 100, Fingerprint: "f"}
	cs := &corpusState{Record: rec}
	tc := cnn.DefaultRecipe().Train
	m := &cnn.Model{Config: cnn.Config{VocabSize: 10, Classes: 2, Dim: 4, Widths: []int{3}, Filters: 2}}
	if _, err := retrainRecipe(m, cs); err == nil || !strings.Contains(err.Error(), "no training recipe") {
		t.Errorf("a model without a recipe: %v", err)
	}
	m.Info.Recipe = &tc
	if _, err := retrainRecipe(m, cs); err == nil || !strings.Contains(err.Error(), "not trained on the open data") {
		t.Errorf("a model without a split record: %v", err)
	}
	for _, change := range []func(r *cnn.SplitRecord){
		func(r *cnn.SplitRecord) { r.Fingerprint = "g" },
		func(r *cnn.SplitRecord) { r.Seed = 2 },
		func(r *cnn.SplitRecord) { r.DevFrac = 0.2 },
		func(r *cnn.SplitRecord) { r.DevFile = "/dev.csv" },
		func(r *cnn.SplitRecord) { r.TestFile = "/test.csv" },
	} {
		other := rec
		change(&other)
		m.Info.Splits = &other
		if _, err := retrainRecipe(m, cs); err == nil {
			t.Errorf("splits %+v taken for %+v", other, rec)
		}
	}
	same := rec
	same.Data = "elsewhere/d.csv" // the same data under another name
	m.Info.Splits = &same
	r, err := retrainRecipe(m, cs)
	if err != nil || r.Train.Seed != tc.Seed || r.Model.VocabSize != 0 || r.Model.Widths[0] != 3 {
		t.Errorf("recipe %+v, %v", r, err)
	}
	// The patterns train --mask-tokens took out are part of the recipe:
	// cnn.TrainText takes them out again.
	tc.MaskTokens = []string{`/(?i)\btkref\s*-\s*[0-9]+\b/`}
	if r, err := retrainRecipe(m, cs); err != nil || !slices.Equal(r.Train.MaskTokens, tc.MaskTokens) {
		t.Errorf("a recipe with a mask: retrained with %q (%v), want %q", r.Train.MaskTokens, err, tc.MaskTokens)
	}
}

// The status bar's figure grows through the audit's stages.
func TestAuditProgress(t *testing.T) {
	var got []int
	total := 0
	p := auditProgress(func(done, tot int, what string) {
		got = append(got, done)
		total = tot
		if !strings.HasPrefix(what, "Cue audit, step ") {
			t.Errorf("progress says %q", what)
		}
	})
	for _, s := range auditStages {
		p(s.name, 0, 2)
		p(s.name, 2, 2)
	}
	p("unknown stage", 1, 1)
	if !slices.IsSorted(got) || got[0] != 0 || got[len(got)-1] != total || len(got) != 2*len(auditStages) {
		t.Errorf("progress %v of %d", got, total)
	}
}

// Marks are written beside the model, atomically through the State's
// writer, and never onto a file the window reads; a marks file that cannot
// be read is never written over.
func TestMarksBesideModel(t *testing.T) {
	dir := t.TempDir()
	st, _ := saveState(t, dir)
	var written []string
	st.writeFile = func(path string, write func(io.Writer) error) error {
		written = append(written, path)
		return atomicfile.Write(path, write)
	}
	m := &cnn.Model{Vocab: []string{"<pad>", "<unk>", "sent", "via", "kioskmail"}}
	modelPath := filepath.Join(dir, "ferry.tt")
	v := st.auditView
	v.marks = readMarks(&modelState{Model: m, Path: modelPath})
	if v.marks.err != nil || v.marks.file != filepath.Join(dir, "ferry.marks") || v.marks.marks.Len() != 0 {
		t.Fatalf("marks of a model without a marks file: %+v", v.marks)
	}
	words := []string{"sent", "via", "kioskmail"}
	if err := v.setMark(words, audit.MarkArtifact); err != nil {
		t.Fatal(err)
	}
	back, err := audit.ReadMarks(v.marks.file, m)
	if err != nil || back.Get(words) != audit.MarkArtifact || !slices.Equal(written, []string{v.marks.file}) {
		t.Fatalf("marks file: %v, %v; written %v", back, err, written)
	}
	if got := readMarks(&modelState{Model: m, Path: modelPath}); got.marks.Get(words) != audit.MarkArtifact {
		t.Errorf("the marks are not read back beside the model")
	}

	// A marks file that is an input of the window (here the open data
	// file) is refused, and the mark is taken back.
	data := filepath.Join(dir, "data.marks")
	if err := os.WriteFile(data, []byte("text,label\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	st.opts.DataPath = data
	v.marks.file = data
	if err := v.setMark(words, audit.MarkTask); err == nil || !strings.Contains(err.Error(), "reads from") {
		t.Errorf("marks written onto the data file: %v", err)
	}
	if b, _ := os.ReadFile(data); string(b) != "text,label\n" || v.marks.marks.Get(words) != audit.MarkArtifact {
		t.Errorf("the data file became %q, the mark %q", b, v.marks.marks.Get(words))
	}

	// A marks file that cannot be read is left as it is.
	bad := filepath.Join(dir, "bad.marks")
	if err := os.WriteFile(bad, []byte("maybe sent\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	v.marks = readMarks(&modelState{Model: m, Path: filepath.Join(dir, "bad.tt")})
	if !errors.Is(v.marks.err, audit.ErrInput) || !strings.Contains(v.marks.note(), "bad.marks line 1") || v.marksForRun() != nil {
		t.Errorf("an unreadable marks file: %v; note %q", v.marks.err, v.marks.note())
	}
	if err := v.setMark(words, audit.MarkArtifact); err == nil {
		t.Errorf("a mark was set over an unreadable marks file")
	}
	if b, _ := os.ReadFile(bad); string(b) != "maybe sent\n" {
		t.Errorf("the unreadable marks file became %q", b)
	}

	// A model not saved yet keeps its marks until it is saved, then beside it.
	v.marks = readMarks(&modelState{Model: m})
	written = nil
	if err := v.setMark(words, audit.MarkTask); err != nil || len(written) != 0 {
		t.Fatalf("marks of an unsaved model: %v, written %v", err, written)
	}
	saved := filepath.Join(dir, "new.tt")
	if err := v.modelSaved(saved); err != nil {
		t.Fatal(err)
	}
	if back, err := audit.ReadMarks(filepath.Join(dir, "new.marks"), m); err != nil || back.Get(words) != audit.MarkTask {
		t.Errorf("marks beside the saved model: %v, %v", back, err)
	}
}

// checkAuditViewFits: at the window's size every tab of the Cue audit view
// fits the window, cuts nothing (checkViewsFit checks the tab a view opens
// on) and hides no tab behind an overflow menu. TestEveryViewFits runs it
// on its loaded window at 1024×700 and 1366×900.
func checkAuditViewFits(t *testing.T, w fyne.Window, st *State, q *queue, size fyne.Size) {
	st.show(titleAudit)
	av := st.auditView
	for _, tab := range av.lists.Items {
		av.lists.Select(tab)
		checkFits(t, w, q, size, tab.Text)
		all := []*container.AppTabs{av.lists}
		if tab == av.actionTab {
			all = append(all, av.action.tabs)
		}
		for _, tabs := range all {
			if overflows(tabs) {
				t.Errorf("%s: tabs hidden behind the overflow menu of %q", tab.Text, tabs.Items[0].Text)
			}
		}
	}
}

// overflows reports whether tabs shows its overflow menu: some tab titles
// do not fit its bar.
func overflows(tabs *container.AppTabs) bool {
	var walk func(o fyne.CanvasObject) bool
	walk = func(o fyne.CanvasObject) bool {
		switch w := o.(type) {
		case *widget.Button:
			return w.Visible() && w.Text == "" && w.Icon != nil
		case *fyne.Container:
			return slices.ContainsFunc(w.Objects, walk)
		}
		return false
	}
	return slices.ContainsFunc(test.WidgetRenderer(tabs).Objects(), walk)
}

// TestAuditChoiceHeldout: the window's record of the texts that chose
// names what was held out: "test" only when the open corpus's test split
// is the one the audited model records (its data, and its test file or its
// share and seed); another corpus's split is named by its test file, or by
// its data file when the split is a share of it.
func TestAuditChoiceHeldout(t *testing.T) {
	rec := cnn.SplitRecord{Data: "d.csv", DataAbs: "/d.csv", TestFrac: 0.1, Seed: 1, Examples: 20, Fingerprint: "f"}
	test := &corpus.Dataset{Examples: []corpus.Example{{Text: "a", Label: "x"}}}
	for _, c := range []struct {
		name string
		edit func(r *cnn.SplitRecord)
		want string
	}{
		{"the model's split", func(*cnn.SplitRecord) {}, "test"},
		{"other data, no test file", func(r *cnn.SplitRecord) { r.Data, r.DataAbs, r.Fingerprint = "o.csv", "/o.csv", "g" }, "/o.csv"},
		{"another share", func(r *cnn.SplitRecord) { r.TestFrac = 0.2 }, "/d.csv"},
		{"a test file", func(r *cnn.SplitRecord) { r.TestFile = "/t.csv" }, "/t.csv"},
	} {
		cr := rec
		c.edit(&cr)
		m := &cnn.Model{}
		m.Info.Splits = &rec
		a := &auditState{R: &audit.Result{Selection: []int{0}}, ms: &modelState{Model: m}, cs: &corpusState{Record: cr, Test: test}}
		if got := a.choice(cnn.ChoseRetrain); got.Heldout != c.want {
			t.Errorf("%s: heldout %q, want %q", c.name, got.Heldout, c.want)
		}
	}
}
