package gui

import (
	"encoding/xml"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"telltale/audit"
	"telltale/cnn"
	"telltale/explain"
	"telltale/internal/wording"
	"telltale/report"
)

// session is the window of TestWholeSession and what it has shown so far.
type session struct {
	t  *testing.T
	w  fyne.Window
	st *State
	q  *queue
	cs *corpusState
	ms *modelState
}

// TestWholeSession walks the main job through the window: open the demo
// corpus, train a tiny model, select a filter, explain a sentence, run the
// audit and save the masked model it suggests, checking widget state and what is painted against
// the numbers of the packages underneath.
func TestWholeSession(t *testing.T) {
	a := test.NewTempApp(t)
	// The whole demo corpus, also in the race pass: the audit must find its
	// planted cues and act on them, which a quarter of it does not show.
	tr, te := demoFiles(t)
	q := &queue{}
	w, st := newWindow(a, Options{DemoTrain: tr, DemoTest: te}, q.post)
	w.Resize(fyne.NewSize(1180, 760))
	t.Cleanup(st.cancelAll)
	s := &session{t: t, w: w, st: st, q: q}
	s.corpus()
	s.training()
	s.results()
	s.filter()
	s.explanation()
	top := s.audit()
	s.filterList(top)
	s.action()
	s.marks()
	s.retrain()
}

// corpus: the demo corpus opens with its test file as the test split.
func (s *session) corpus() {
	t, w, st, q := s.t, s.w, s.st, s.q
	q.waitFor(t, "the demo corpus", func() bool { return itemGet(st.data) != nil })
	cs := itemGet(st.data)
	s.cs = cs
	if got := len(cs.Train.Labels); got != 5 {
		t.Fatalf("demo corpus has %d labels, want the five teams", got)
	}
	if !strings.Contains(test.RenderToMarkup(w.Canvas()), "Open: the built-in demo corpus") {
		t.Errorf("corpus view does not name the opened corpus")
	}
	if cs.TestFile == nil || len(cs.Test.Examples) != len(cs.TestFile.Examples) || len(cs.Dev.Examples) == 0 {
		t.Errorf("the demo's test file is not the test split, or there is no dev split")
	}
}

// training: a small recipe trains with the buttons following the run, and
// the reliability bins drawn reproduce cnn's calibration error.
func (s *session) training() {
	t, st, q, cs := s.t, s.st, s.q, s.cs
	// A small recipe; three epochs; the linear baseline beside it, except in
	// the race pass (-short): the baseline's fit runs ten times slower under
	// the race detector; the race pass covers its threads in ./linear and
	// the full run covers it here.
	smallRecipe(st)
	if !testing.Short() {
		_ = st.recipe.baseline.Set(true)
	}
	tv := st.trainingView
	test.Tap(tv.trainBtn)
	if !tv.trainBtn.Disabled() || tv.stopBtn.Disabled() {
		t.Errorf("while training, Train should be disabled and Stop enabled")
	}
	q.waitFor(t, "the trained model and its profiles", func() bool { return itemGet(st.profiles) != nil })
	ms := itemGet(st.model)
	s.ms = ms
	if ms.Model.Config.NumFilters() != 3*10 || ms.Eval == nil {
		t.Fatalf("model has %d filters (want 3 widths × 10) or no evaluation", ms.Model.Config.NumFilters())
	}
	if ms.Eval.Metrics.N != len(cs.Test.Examples) {
		t.Errorf("Results cover %d texts, the test split has %d", ms.Eval.Metrics.N, len(cs.Test.Examples))
	}
	if tv.trainBtn.Disabled() {
		t.Errorf("Train button still disabled after training")
	}
	if d := tv.run.snapshot(); len(d.LossY) == 0 || len(d.DevF1) != len(ms.Run.Epochs) || len(d.Epochs) != len(ms.Run.Epochs) {
		t.Errorf("curves: %d loss points, %d dev points, %d epoch rows for %d epochs", len(d.LossY), len(d.DevF1), len(d.Epochs), len(ms.Run.Epochs))
	}
	// The reliability bins drawn must reproduce cnn's expected calibration
	// error (Guo et al. 2017: ECE = Σ |B|/n · |acc − conf|).
	var ece float64
	for _, b := range reliabilityBins(ms.Eval, cnn.DefaultBins) {
		ece += float64(b.Count) / float64(len(ms.Eval.Pred)) * math.Abs(b.Acc-b.Conf)
	}
	if math.Abs(ece-ms.Eval.Metrics.ECE) > 1e-9 {
		t.Errorf("reliability bins give ECE %.12f, cnn says %.12f", ece, ms.Eval.Metrics.ECE)
	}
}

// filter: the painted n-gram tokens of a filter carry its slot scores.
func (s *session) filter() {
	t, st, q := s.t, s.st, s.q
	// Select a filter: the painted n-gram tokens carry the profile's slot
	// scores in log-odds units.
	st.showFilter(3, nil)
	q.drain()
	fp := st.filtersView.shown
	if fp == nil || fp.Filter != 3 {
		t.Fatalf("filter 3 not shown: %+v", fp)
	}
	var want []float64
	for _, n := range fp.TopNgrams {
		want = append(want, n.SlotsLogOdds...)
	}
	chips := st.filtersView.ngramChips()
	if len(chips) != len(want) {
		t.Fatalf("%d n-gram tokens painted, profile has %d", len(chips), len(want))
	}
	for i, c := range chips {
		if c.value != want[i] {
			t.Errorf("n-gram token %d painted %v, slot score %v", i, c.value, want[i])
		}
	}
	// So do its negative n-grams.
	want = want[:0]
	for _, n := range fp.Negatives {
		want = append(want, n.SlotsLogOdds...)
	}
	chips = st.filtersView.negativeChips()
	if len(chips) != len(want) {
		t.Fatalf("%d negative n-gram tokens painted, profile has %d", len(chips), len(want))
	}
	for i, c := range chips {
		if c.value != want[i] {
			t.Errorf("negative n-gram token %d painted %v, slot score %v", i, c.value, want[i])
		}
	}
}

// explanation: a typed text is painted with the explanation's numbers.
func (s *session) explanation() {
	t, w, st, q := s.t, s.w, s.st, s.q
	// Explain a sentence typed into the box.
	st.show(titleWhy)
	q.drain()
	wv := st.whyView
	wv.entry.SetText("")
	test.Type(wv.entry, "the staff were not friendly at all")
	q.waitFor(t, "the explanation", func() bool {
		e := wv.shown
		return e != nil && e.Text == "the staff were not friendly at all" && e.E != nil
	})
	e := wv.shown.E
	chips := wv.chips()
	if len(chips) != len(e.Tokens) || len(chips) != 7 {
		t.Fatalf("%d tokens painted, explanation has %d (want 7)", len(chips), len(e.Tokens))
	}
	// By default the shares of the log-odds of the predicted label against
	// the runner-up.
	for i, c := range chips {
		if c.value != e.LogOdds.Tokens[i] || c.text != e.Tokens[i].Text {
			t.Errorf("token %d painted %q %v, explanation %q %v", i, c.text, c.value, e.Tokens[i].Text, e.LogOdds.Tokens[i])
		}
	}
	markup := test.RenderToMarkup(w.Canvas())
	if !strings.Contains(markup, "Predicted: "+e.Label) || !strings.Contains(markup, fmt.Sprintf("log p(%s)/p(%s) = %.4f", e.Label, e.Labels[e.RunnerUp], e.LogOdds.Value)) {
		t.Errorf("explain view does not show the predicted label %q and the log-odds %.4f against %q", e.Label, e.LogOdds.Value, e.Labels[e.RunnerUp])
	}
	// The filters that fired carry their parts of the log-odds.
	for _, row := range wv.fired.rows {
		k := slices.IndexFunc(e.Filters, func(f explain.FiredFilter) bool { return fmt.Sprint(f.Filter) == row[0] })
		if k < 0 || row[colFiredPart] != signed4(e.LogOdds.Filters[k]) {
			t.Errorf("fired filter row %q: not the explanation's part of the log-odds", row)
		}
	}
	if len(wv.kept.rows) != len(e.KeptDown) {
		t.Errorf("%d windows kept down listed, the explanation has %d", len(wv.kept.rows), len(e.KeptDown))
	}
	// Each carries the estimate and the measured change's parts, which add
	// up to the whole change.
	for i, row := range wv.kept.rows {
		kd := e.KeptDown[min(i, len(e.KeptDown)-1)]
		own, others, words, whole := kd.Parts(e.LogOdds.Value)
		ww := "–" // a model without word weights
		if e.LogOdds.Words != nil {
			ww = signed4(words)
		}
		if want := []string{signed4(kd.Effect), signed4(own), signed4(others), ww, signed4(whole)}; !slices.Equal(row[2:7], want) {
			t.Errorf("kept-down row %q: want %q", row, want)
		}
	}
	// A label chosen: the shares of its centred logit, then integrated
	// gradients of it.
	c := (e.Class + 1) % len(e.Labels)
	wv.class.SetSelected(e.Labels[c])
	q.drain()
	for i, ch := range wv.chips() {
		if ch.value != e.Centred[c].Tokens[i] {
			t.Errorf("centred logit of %s: token %d painted %v, explanation %v", e.Labels[c], i, ch.value, e.Centred[c].Tokens[i])
		}
	}
	wv.method.SetSelected(methodIG)
	q.drain()
	for i, ch := range wv.chips() {
		if ch.value != e.Integrated.Centred[c].Tokens[i] {
			t.Errorf("integrated gradients of the centred logit of %s: token %d painted %v, explanation %v", e.Labels[c], i, ch.value, e.Integrated.Centred[c].Tokens[i])
		}
	}
	wv.class.SetSelected(classPredicted)
	// The probabilities under the verdict, ranked.
	if want := rankedWords(e); wv.strip.words() != want {
		t.Errorf("ranked strip says %q, want %q", wv.strip.words(), want)
	}
	wv.method.SetSelected(methodOcclusion)
	q.drain()
	for i, c := range wv.chips() {
		if c.value != e.Attributions.Occlusion[i] {
			t.Errorf("occlusion: token %d painted %v, explanation %v", i, c.value, e.Attributions.Occlusion[i])
		}
	}
}

// audit runs the audit and checks what it lists and paints against
// package audit's numbers; it returns the top artifact-like cue.
func (s *session) audit() audit.Candidate {
	t, w, st, q := s.t, s.w, s.st, s.q
	// Run the audit (Run › Run the audit). The demo plants two cues in the
	// training file (testdata/demo/README.md): a footer line in most
	// lost-property texts and a ticket stamp in most complaints texts, both
	// spread evenly over the labels of the test file. The small recipe
	// above learns both; the audit must rank them first and act on them.
	st.auditNow()
	q.waitFor(t, "the audit", func() bool { return itemGet(st.audit) != nil })
	au := itemGet(st.audit)
	r := au.R
	want := map[string]string{"- - sent via kioskmail at the quayside terminal - -": "lost-property", "tkref - <number>": "complaints"}
	if len(r.Ranked) < 2 {
		t.Fatalf("the audit ranks %d artifact-like cues, want the two planted ones first", len(r.Ranked))
	}
	for _, c := range r.Ranked[:2] {
		if want[c.Text] != c.Label || c.Verdict != audit.VerdictActed {
			t.Errorf("artifact-like cue %q → %s (%s) among the first two; want the planted cues, acted on", c.Text, c.Label, c.Verdict)
		}
	}
	av := st.auditView
	// The story is the audit's, in the window's words.
	if got := av.story.Text; got != windowStory(r) || strings.Contains(got, "telltale train") || strings.Contains(got, "held-out") {
		t.Errorf("the story on screen is not the audit's in the window's words:\n%s", got)
	}
	// Both lists show every cue with the audit's figures.
	if len(av.ranked.rows) != len(r.Ranked) || len(av.task.rows) != len(r.Task) {
		t.Errorf("lists of %d and %d rows, the audit lists %d and %d cues", len(av.ranked.rows), len(av.task.rows), len(r.Ranked), len(r.Task))
	}
	// The Corpus view's cues note counts the cues of those two lists and
	// groups the number of tests as the audit's own wording does.
	listed := fmt.Sprintf("the %d cues the Cue audit view lists", len(av.ranked.rows)+len(av.task.rows))
	if n := st.corpusView.cuesNote.Text; !strings.Contains(n, listed) || !strings.Contains(n, "over the "+wording.Thousands(r.Tests)+" word") {
		t.Errorf("the Corpus view's cues note %q, want %q and the %s tests", n, listed, wording.Thousands(r.Tests))
	}
	top := r.Ranked[0]
	row := av.ranked.rows[0]
	lo, hi := audit.Wilson(top.Association.InLabel, top.Association.Texts, 0.95)
	if row[1] != oneLine(top.Surface) || row[4] != fmt.Sprint(top.Association.Texts) ||
		row[5] != pctInterval(audit.Interval{Estimate: top.Association.Share, Low: lo, High: hi}) ||
		row[7] != pctInterval(top.Confirmed.FlipRate) || row[8] != pctInterval(top.Confirmed.ControlFlipRate) {
		t.Errorf("top row %q does not show the audit's figures of %q", row, top.Text)
	}
	// The top cue is shown on the right in report.DescribeCue's words.
	ev := report.DescribeCue(&r.Ranked[0], r, au.priors)
	shown := map[string]bool{}
	for _, o := range av.evidence.facts.box.Objects {
		var b strings.Builder
		for _, seg := range o.(*widget.RichText).Segments {
			b.WriteString(seg.Textual())
		}
		shown[b.String()] = true
	}
	for _, part := range []string{"Association  " + ev.Association, "Reliance  " + ev.Reliance, "Artifact-likeness  " + ev.Artifact} {
		part = inWindowWords(part)
		if !shown[part] {
			t.Errorf("the evidence pane does not show %q", part)
		}
	}
	if title := av.evidence.title.Text; !strings.HasPrefix(title, capitalize(ev.Name)+" → "+ev.Label+": "+ev.Verdict) {
		t.Errorf("the evidence pane's title %q does not name the cue, its label and the verdict", title)
	}
	// No field name of the JSON is on screen.
	for _, tab := range av.lists.Items {
		av.lists.Select(tab)
		q.drain()
		markup := test.RenderToMarkup(w.Canvas())
		for _, name := range []string{"acted-on", "not-relied-on", "flip_rate", "label_drop", "artifact_likeness", "reliance_selection", "heldout"} {
			if strings.Contains(markup, name) {
				t.Errorf("the %s tab shows the field name %q", tab.Text, name)
			}
		}
	}
	av.lists.Select(av.storyTab)
	// The texts behind the reliance figure are the audit's examples, by
	// their place in the test split; one opens in Why this label.
	exs := au.examplesOf(0)
	var fromTest *auditExample
	for i, e := range exs {
		if e.Split == "test" {
			fromTest = &exs[i]
			if e.Text != s.cs.Test.Examples[e.Index].Text || !strings.Contains(oneLine(e.Text), unquote(e.Quote)) {
				t.Errorf("example %+v is not test text %d", e, e.Index)
			}
		}
	}
	if fromTest == nil {
		t.Fatalf("no test text behind the top cue's reliance")
	}
	st.explainThis(fromTest.Text, nil)
	q.drain()
	if st.shownTitle() != titleWhy || stringGet(st.explainText) != fromTest.Text {
		t.Errorf("an example does not open in Why this label")
	}
	st.show(titleAudit)
	return top
}

// unquote is an example's quote without the audit's marks: the ellipses
// and the brackets around the cue.
func unquote(q string) string {
	return oneLine(strings.NewReplacer("…", " ", "[", "", "]", "").Replace(q))
}

// xmlText is s as the markup of a rendering writes it.
func xmlText(s string) string {
	var b strings.Builder
	_ = xml.EscapeText(&b, []byte(s))
	return b.String()
}

// filterList: the Filters view ranks by the cues the filters read and
// searches cue words.
func (s *session) filterList(top audit.Candidate) {
	t, st := s.t, s.st
	fl := st.filtersView.list
	first := fl.rows[fl.visible(0)]
	if top.Filters == nil || len(top.Filters.Keyed) == 0 {
		t.Fatalf("the top cue has no filters that read it")
	}
	if first[colFilterCueRank] != "1" || !slices.Contains(top.Filters.Keyed, atoi(t, first[0])) {
		t.Errorf("the Filters view starts with filter %s (cue rank %s), want one that reads the top cue (%v)", first[0], first[colFilterCueRank], top.Filters.Keyed)
	}
	fl.setQuery("kioskmail")
	if len(fl.order) == 0 {
		t.Errorf("searching the filter list for kioskmail finds nothing")
	}
	for i := range fl.order {
		if r := fl.rows[fl.visible(i)]; !strings.Contains(strings.ToLower(r[colFilterCues]+r[len(r)-1]), "kioskmail") {
			t.Errorf("search for kioskmail shows filter %s with neither a cue nor an n-gram holding it", r[0])
		}
	}
	fl.setQuery("")
}

func atoi(t *testing.T, s string) int {
	t.Helper()
	n, err := strconv.Atoi(s)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

// action: the suggested filter mask is offered only when the audit
// suggests one, and the copy it saves masks exactly those filters.
func (s *session) action() {
	t, st, q := s.t, s.st, s.q
	a := itemGet(st.audit)
	p := st.auditView.action
	mask := a.R.Action.Mask
	if p.saveMask.Visible() != (mask != nil) {
		t.Fatalf("the masked-model button shows %v, the audit suggests the mask %v", p.saveMask.Visible(), mask)
	}
	if mask == nil {
		return
	}
	dir := t.TempDir()
	st.pickFolder = func(start string, done func(string)) { done(dir) }
	test.Tap(p.saveMask)
	sf := shownSave(t, st)
	sf.choose()
	sf.form.Submit()
	q.drain()
	back, err := cnn.Load(filepath.Join(dir, stem(s.ms)+"-masked.tt"))
	if err != nil {
		t.Fatal(err)
	}
	for g := range back.Config.NumFilters() {
		if back.IsMasked(g) != slices.Contains(mask, g) || s.ms.Model.IsMasked(g) {
			t.Fatalf("filter %d: masked %v in the saved copy (want %v), %v in the open model (want false)", g, back.IsMasked(g), slices.Contains(mask, g), s.ms.Model.IsMasked(g))
		}
	}
}

// marks: marking a listed cue writes the marks file beside the saved model,
// and the audit, run again, lists the cue by its mark: a cue that reads like
// the task marked artifact is ranked among the artifact-like cues; when the
// audit confirms no cue that reads like the task, the last artifact-like
// cue, marked task, is listed apart with the cues that read like the task.
func (s *session) marks() {
	t, st, q := s.t, s.st, s.q
	dir := t.TempDir()
	path := filepath.Join(dir, "ferry.tt")
	if err := st.saveModel(s.ms, path); err != nil {
		t.Fatal(err)
	}
	a := itemGet(st.audit)
	k, mark := len(a.R.Ranked), audit.MarkArtifact
	if len(a.R.Task) == 0 {
		// The last artifact-like cue, the first cue still acted on for the
		// retraining that follows.
		if len(a.R.Ranked) < 2 {
			t.Fatalf("the audit lists no cue that reads like the task and %d artifact-like: nothing to mark task and keep one to act on", len(a.R.Ranked))
		}
		k, mark = len(a.R.Ranked)-1, audit.MarkTask
	}
	cue := *a.listed[k]
	av := st.auditView
	av.selectCue(k)
	q.drain()
	if av.selected != cue.Text {
		t.Fatalf("the evidence pane shows %q, want the cue to mark %q", av.selected, cue.Text)
	}
	av.evidence.verdict.SetSelected(mark)
	q.waitFor(t, "the audit with the mark", func() bool { b := itemGet(st.audit); return b != a && b != nil })
	mk, err := audit.ReadMarks(audit.MarksPath(path), s.ms.Model)
	if err != nil {
		t.Fatal(err)
	}
	if got := mk.Cues(mark); len(got) != 1 || strings.Join(got[0], " ") != cue.Text {
		t.Errorf("the marks file holds %v, want %q marked %s", got, cue.Text, mark)
	}
	b := itemGet(st.audit)
	j := b.find(cue.Text)
	if _, artifact := b.rankOf(j); j < 0 || artifact != (mark == audit.MarkArtifact) || b.listed[j].Mark != mark {
		t.Errorf("after the mark %s, %q is not listed by its mark", mark, cue.Text)
	}
	if av.selected != cue.Text || av.evidence.verdict.Selected != mark {
		t.Errorf("the evidence pane shows %q marked %q after the audit ran again", av.selected, av.evidence.verdict.Selected)
	}
	// Saving the model again writes its marks beside it, and the status
	// line names both files.
	st.commitSave(path, func(p string) error { return st.saveModel(s.ms, p) })
	if got, want := st.statusText(), "Wrote "+path+" and ferry.marks beside it"; got != want {
		t.Errorf("status %q after saving a model with marks, want %q", got, want)
	}
}

// retrain: retraining without the cues compares both models on the
// audit's confirming half (the choosing half chose the cues); the audited
// model's accuracy there (cnn.Evaluate's) is the audit's own on that half,
// measured through the slot table.
func (s *session) retrain() {
	t, st, q := s.t, s.st, s.q
	p := st.auditView.action
	if p.retrainBtn.Disabled() {
		t.Fatalf("Retrain without the cues is disabled after an audit that acts on cues")
	}
	// A retraining stopped leaves the note as it was, not saying it runs.
	before := p.compareNote.Text
	test.Tap(p.retrainBtn)
	st.cancel(taskRetrain)
	q.waitFor(t, "the stopped retraining", func() bool { return st.tasks.idle(taskRetrain) && st.tasks.settled(taskRetrain) })
	q.drain()
	if p.result != nil || p.compareNote.Text != before || p.retrainBtn.Disabled() {
		t.Errorf("after a stopped retraining: result %v, note %q (want %q), Retrain disabled %v", p.result, p.compareNote.Text, before, p.retrainBtn.Disabled())
	}
	test.Tap(p.retrainBtn)
	q.waitFor(t, "the retrained model", func() bool { return p.result != nil })
	rt := p.result.rt
	// A model trained in this window had no word vectors: the note does
	// not warn of them; its counts are grouped by thousands.
	if n := p.compareNote.Text; strings.Contains(n, "Word vectors") || !strings.Contains(n, wording.Grouped(rt.Removed, "match", "matches")+" taken out") {
		t.Errorf("the note after retraining a model trained in the window: %q", n)
	}
	a := itemGet(st.audit)
	if want := retrainPatterns(a.R, a.marks); !slices.Equal(rt.Patterns, want) {
		t.Errorf("retrained without %q, want the cues acted on and marked artifact %q", rt.Patterns, want)
	}
	if cf := a.R.Action.Counterfactual; cf == nil || rt.Texts != a.R.ConfirmationTexts || rt.Original.Before != cf.Accuracy {
		t.Errorf("the audited model compared on %d texts, accuracy %v; the audit's confirming half has %d, where it scores %+v",
			rt.Texts, rt.Original.Before, a.R.ConfirmationTexts, cf)
	}
	if !reflect.DeepEqual(p.compare.rows, retrainRows(rt)) || p.saveRetrain.Disabled() {
		t.Errorf("the comparison shows %q, want %q, and the retrained model can be saved", p.compare.rows, retrainRows(rt))
	}
	// The status bar gives the test between the two models and their
	// intervals, not the accuracies alone.
	if got, want := st.statusText(), retrainedStatus(rt); got != want {
		t.Errorf("status %q after retraining, want %q", got, want)
	}
	// The retrained model records the audited model's splits and the
	// choosing half as the texts that chose its cues, as audit
	// --retrain-out does; the window warns of them on that test split.
	info := rt.Model.Info
	if r := info.Splits; r == nil || *r != *a.ms.Model.Info.Splits || len(info.CuesChosenOn) != 1 ||
		len(info.CuesChosenOn[0].Texts) != a.R.SelectionTexts || info.CuesChosenOn[0].Of != len(a.cs.Test.Examples) ||
		info.CuesChosenOn[0].For != cnn.ChoseRetrain {
		t.Errorf("the retrained model records the splits %+v and the cues chosen on %+v; want %+v and the %d texts of the choosing half",
			info.Splits, info.CuesChosenOn, a.ms.Model.Info.Splits, a.R.SelectionTexts)
	}
	if ws := heldOutWarnings(rt.Model, a.cs); !slices.ContainsFunc(ws, func(w string) bool { return strings.Contains(w, "the audit's choosing half") }) {
		t.Errorf("the retrained model on the audit's test split: warnings %q", ws)
	}
}

// TestBadDataShowsDialog: a file without the label column gives a dialog
// with the reader's message, not a crash.
func TestBadDataShowsDialog(t *testing.T) {
	a := test.NewTempApp(t)
	path := filepath.Join(t.TempDir(), "bad.csv")
	if err := os.WriteFile(path, []byte("text,team\nhello there,a\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	q := &queue{}
	ready := false
	w, st := newWindow(a, Options{DataPath: path, OnReady: func() { ready = true }}, q.post)
	w.Resize(fyne.NewSize(1000, 700))
	q.waitFor(t, "the load to fail", func() bool { return st.tasks.idle(taskLoad) && ready })
	top := w.Canvas().Overlays().Top()
	if top == nil {
		t.Fatalf("no error dialog shown")
	}
	m := test.RenderObjectToMarkup(top)
	if !strings.Contains(m, "bad.csv") {
		t.Errorf("error dialog does not name the file:\n%s", m)
	}
	if itemGet(st.data) != nil {
		t.Errorf("a corpus was opened from a bad file")
	}
}

// TestViewIndex checks the start-view names main.go passes on.
func TestViewIndex(t *testing.T) {
	vs := viewTable()
	for _, c := range []struct {
		in   string
		want int
	}{{"Corpus", 0}, {"corpus", 0}, {"why", 4}, {"Cue audit", 5}, {"f", 3}, {"res", 2}, {"nope", -1}, {"", -1}} {
		if got := viewIndex(vs, c.in); got != c.want {
			t.Errorf("viewIndex(%q) = %d, want %d", c.in, got, c.want)
		}
	}
}
