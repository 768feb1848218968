package report

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	auditpkg "telltale/audit"
	"telltale/cnn"
)

func render(t *testing.T, r *Report) string {
	t.Helper()
	var buf bytes.Buffer
	if err := r.WriteHTML(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}

// TestDemoSections checks that a report of a real (tiny) model holds every
// section, that its numbers are the ones computed by cnn and explain, and
// that it references nothing outside the file.
func TestDemoSections(t *testing.T) {
	d := loadDemo(t)
	raw := render(t, d.report)
	checkSelfContained(t, raw)
	// Compare the text as a browser reads it: html/template writes "+" as
	// "&#43;", quotes as "&#34;".
	out := html.UnescapeString(raw)
	for _, id := range []string{"data", "recipe", "metrics", "filters", "audit", "examples", "caution"} {
		if !strings.Contains(out, `<section id="`+id+`">`) {
			t.Errorf("section %q missing", id)
		}
	}
	mt := d.input.Metrics
	head := cnn.HeadlineOf(*mt)
	iv := cnn.IntervalsOf(*mt)
	if iv.ECE == nil {
		t.Fatal("the demo's metrics carry no confidences: no ECE interval")
	}
	want := []string{
		"<title>Ferry desk demo</title>",
		"Accuracy</span><span class=\"v\">" + head.Accuracy.String() + "<",
		"Macro-F1</span><span class=\"v\">" + head.MacroF1.String() + "<",
		"ECE</span><span class=\"v\">" + iv.ECE.String() + "<",
		"Evaluated on", "test split, 300 texts",
		"expected calibration error " + iv.ECE.String(),
		"weighted F1 " + iv.WeightedF1.String(),
		// the training record
		"<th>Filter widths</th><td>2, 3</td>",
		"<th>Optimizer</th><td>adam</td>",
		"Never use this model, or this report, as the only basis for a decision about a person.",
	}
	for i, c := range mt.PerClass {
		ci := iv.PerClass[i]
		if ci.Precision.Estimate != c.Precision || ci.Recall.Estimate != c.Recall || ci.F1.Estimate != c.F1 {
			t.Errorf("class %s: intervals %+v of other figures than %+v", c.Label, ci, c)
		}
		want = append(want, "<td>"+c.Label+"</td><td class=\"num\">"+ci.Precision.String()+"</td><td class=\"num\">"+ci.Recall.String()+"</td><td class=\"num\">"+ci.F1.String()+"</td><td class=\"num\">"+count(c.Support)+"</td>")
	}
	for g, row := range mt.Confusion {
		for p, v := range row {
			want = append(want, `title="gold `+mt.Labels[g]+`, predicted `+mt.Labels[p]+`: `+count(v)+`">`+count(v)+`</td>`)
		}
	}
	for _, sp := range d.input.Summary.Splits {
		want = append(want, `<td class="num">`+count(sp.Examples)+`</td>`)
	}
	for _, w := range want {
		if !strings.Contains(out, w) {
			t.Errorf("output lacks %q", w)
		}
	}
	// The audit: the story first, then every listed cue with its three
	// lines of evidence (and the confirming half's label share of a cue
	// with a shift) as DescribeCue words them (the command line says
	// the same), the list apart, and the mask command only when the audit
	// suggests a mask.
	a := d.input.Audit
	if a == nil {
		t.Fatal("Gather did not run the audit")
	}
	audit := out[strings.Index(out, `<section id="audit">`):strings.Index(out, `<section id="examples">`)]
	at := 0
	for _, para := range strings.Split(a.Story(), "\n\n") {
		flowed := reflow(para)
		if got, want := strings.Join(strings.Fields(flowed), " "), strings.Join(strings.Fields(para), " "); got != want {
			t.Errorf("story paragraph reflowed to other words:\n%s\nwant\n%s", got, want)
		}
		k := strings.Index(audit[at:], "<p>"+flowed+"</p>")
		if k < 0 {
			t.Fatalf("story paragraph %q missing or out of order", flowed)
		}
		at += k
	}
	shares := trainShares(d.input.Summary, d.model.Labels)
	for _, list := range [][]auditpkg.Candidate{a.Ranked, a.Task} {
		for i := range list {
			ev := DescribeCue(&list[i], a, shares)
			for _, part := range []string{ev.Name + " → " + ev.Label + " · " + ev.Verdict, ev.Association, cmpOr(ev.Reliance, "not measured"), ev.Artifact, ev.Shift, ev.Words} {
				if part == "" { // no confirmed shift to show
					continue
				}
				k := strings.Index(audit[at:], part)
				if k < 0 {
					t.Errorf("cue %q: %q missing or out of order", list[i].Text, part)
					continue
				}
				at += k
			}
		}
	}
	if got, want := strings.Count(audit, `<div class="cuecard">`), len(a.Ranked)+len(a.Task); got != want {
		t.Errorf("%d cues shown, want %d", got, want)
	}
	if has := strings.Contains(audit, "telltale mask --model demo.model --filters "); has != (a.Action.Mask != nil) {
		t.Errorf("mask command shown %v, mask suggested %v", has, a.Action.Mask)
	}
	// The demo corpus plants two cues (testdata/demo/README.md): the
	// footer line (word "kioskmail") and the ticket stamp ("tkref"). On
	// this slice of the corpus both must be associated, measured and read
	// as artifact-like: listed among the cues that look like collection.
	for _, cue := range []string{"kioskmail", "tkref"} {
		if !slices.ContainsFunc(a.Ranked, func(c auditpkg.Candidate) bool { return slices.Contains(c.Words, cue) }) {
			t.Errorf("planted cue %q not among the artifact-like cues", cue)
		}
	}
	// Examples: every kind present in the input is shown with its numbers.
	if len(d.input.Examples) == 0 {
		t.Fatal("no examples gathered")
	}
	for _, ex := range d.input.Examples {
		e := ex.Explanation
		lo := e.LogOdds
		var sum, fb float64
		for _, v := range lo.Tokens {
			sum += v
		}
		for _, v := range lo.FilterBias {
			fb += v
		}
		id := "log p(" + e.Label + ")/p(" + e.Labels[e.RunnerUp] + ") " + signed(lo.Value) + " = output bias " + signed(lo.OutputBias) +
			" + filter biases " + signed(fb) + " + token shares " + signed(sum)
		if !strings.Contains(out, id) {
			t.Errorf("identity line %q missing", id)
		}
		// The decomposition shown must hold (explain's identity), and its
		// value is the log-odds of the probabilities shown.
		if d := lo.OutputBias + fb + sum - lo.Value; d > 1e-4 || d < -1e-4 {
			t.Errorf("shown identity off by %g", d)
		}
		if d := math.Log(e.Probabilities[e.Class]/e.Probabilities[e.RunnerUp]) - lo.Value; d > 1e-4 || d < -1e-4 {
			t.Errorf("log-odds %g is not log p(%s)/p(%s) of the probabilities shown (off by %g)", lo.Value, e.Label, e.Labels[e.RunnerUp], d)
		}
		// Every kept-down window is shown with its measured check.
		for _, kd := range e.KeptDown {
			row := "<td>" + fmt.Sprintf("%d (width %d)", kd.Filter, kd.Width) + "</td>"
			own, others, _, whole := kd.Parts(lo.Value)
			cells := `<td class="num">` + strings.Join([]string{signed(kd.Effect), signed(own), signed(others), signed(whole), signed(kd.Drop)}, `</td><td class="num">`) + `</td>`
			if !strings.Contains(out, row) || !strings.Contains(out, cells) {
				t.Errorf("kept-down window of filter %d at %d not shown with its measured change", kd.Filter, kd.Start)
			}
		}
	}
	// Filters: every selective filter shown is shown with its held-out
	// figures, and none that is not selective is shown.
	for _, f := range d.input.Profiles.Filters {
		card := fmt.Sprintf("<h4>Filter %d · width %d</h4>", f.Filter, f.Width)
		if strings.Contains(out, card) && !f.Selectivity.Selective {
			t.Errorf("filter %d shown though not selective", f.Filter)
		}
		if strings.Contains(out, card) && !strings.Contains(out, heldOut(&f.Selectivity, f.Label)) {
			t.Errorf("filter %d shown without its held-out figures %q", f.Filter, heldOut(&f.Selectivity, f.Label))
		}
	}
	if got := strings.Count(out, `<div class="example">`); got != len(d.input.Examples) {
		t.Errorf("%d example blocks, want %d", got, len(d.input.Examples))
	}
	if got := strings.Count(out, `<div class="card">`); got == 0 {
		t.Error("no filter cards")
	}
}

// checkSelfContained asserts that out has no script, no reference to
// another file or host, and that every src is a data: URL.
func checkSelfContained(t *testing.T, out string) {
	t.Helper()
	low := strings.ToLower(out)
	for _, bad := range []string{"<script", "http:", "https:", "@import", "url(", "<iframe", "<object", "<embed", "stylesheet"} {
		if strings.Contains(low, bad) {
			t.Errorf("output contains %q", bad)
		}
	}
	for _, m := range regexp.MustCompile(`(?:src|href)="([^"]*)"`).FindAllStringSubmatch(out, -1) {
		u := m[1]
		if !strings.HasPrefix(u, "data:") && !strings.HasPrefix(u, "#") {
			t.Errorf("reference to %q", u)
		}
	}
}

// TestAbsentPieces checks that a report with only a model says, section by
// section, what was not computed, and shows no made-up numbers.
func TestAbsentPieces(t *testing.T) {
	d := loadDemo(t)
	r, err := New(Input{Model: d.model})
	if err != nil {
		t.Fatal(err)
	}
	out := render(t, r)
	for _, w := range []string{
		"The dataset summary was not computed for this report.",
		"The model was not evaluated on a test split for this report.",
		"Filter profiles were not computed for this report.",
		"The cue audit (association, reliance and artifact-likeness of the cues that predict a label) was not run for this report",
		"No examples were explained for this report.",
	} {
		if !strings.Contains(out, w) {
			t.Errorf("output lacks %q", w)
		}
	}
	for _, bad := range []string{"data:image", `class="cuecard"`, `class="card"`, `class="example"`, "Accuracy</span>"} {
		if strings.Contains(out, bad) {
			t.Errorf("report without pieces contains %q", bad)
		}
	}
}

func TestNewNeedsModel(t *testing.T) {
	if _, err := New(Input{}); !errors.Is(err, ErrNoModel) {
		t.Fatalf("New without model: %v, want ErrNoModel", err)
	}
}

func TestGatherNeedsHeldOut(t *testing.T) {
	d := loadDemo(t)
	if _, err := Gather(context.Background(), d.model, d.train, nil, Options{}, nil); err == nil || !strings.Contains(err.Error(), "--test FILE") {
		t.Fatalf("Gather without a test split: %v, want an error naming --test", err)
	}
}

// TestAuditLeftOutOnSmallTestSplit: on a test split too small for the cue
// audit's two halves the report is still made, with every other section,
// and the audit's section says why it is missing and how many texts it
// needs (an identity of the audit's MinHalf, 30 a half).
func TestAuditLeftOutOnSmallTestSplit(t *testing.T) {
	d := loadDemo(t)
	in, err := Gather(context.Background(), d.model, d.train, keep(d.test, 41), Options{Threads: 2}, nil)
	if err != nil {
		t.Fatalf("Gather on 41 test texts: %v", err)
	}
	want := "The cue audit needs at least 60 test texts (30 in each of its two halves); this split has 41: give a larger test file."
	if in.Audit != nil || in.AuditNote != want {
		t.Errorf("audit %v, note %q; want none and %q", in.Audit != nil, in.AuditNote, want)
	}
	if in.Metrics == nil || in.Metrics.N != 41 || in.Profiles == nil || len(in.Examples) == 0 {
		t.Error("the other sections are missing")
	}
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	if out := render(t, r); !strings.Contains(out, "was not run for this report, so no cue is named here. "+want) {
		t.Error("the audit section does not say why it is missing")
	}
	// With a share of the data as the test split, the fix is a larger share.
	in, err = Gather(context.Background(), d.model, d.train, keep(d.test, 41), Options{Threads: 2, Audit: auditpkg.Options{HeldoutShare: true}}, nil)
	if err != nil || !strings.Contains(in.AuditNote, "a larger share of the data as its test split") {
		t.Errorf("note %q (%v)", in.AuditNote, err)
	}
}

func TestGatherCancelled(t *testing.T) {
	d := loadDemo(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Gather(ctx, d.model, d.train, d.test, Options{}, nil); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled Gather: %v, want context.Canceled", err)
	}
}

func TestWriteFileAtomic(t *testing.T) {
	d := loadDemo(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "report.html")
	if err := os.WriteFile(path, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := WriteFile(path, d.report); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != render(t, d.report) {
		t.Error("file differs from WriteHTML's output")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("folder holds %d entries after writing, want only the report", len(entries))
	}
	if err := WriteFile(filepath.Join(dir, "missing", "r.html"), d.report); err == nil {
		t.Error("writing into a missing folder succeeded")
	}
}

// TestBaselineBesideTheCNN: the evaluation shows the CNN beside the linear
// baseline the model carries, with the figures cnn computes (Gather's
// comparison is cnn.CompareBaseline's on the held-out split; the intervals
// cnn.HeadlineOf's) and the McNemar test in the words the command line
// uses; a model without a baseline says so, and a comparison of other
// texts is refused.
func TestBaselineBesideTheCNN(t *testing.T) {
	d := loadDemo(t)
	want, err := cnn.CompareBaseline(d.model, d.test, 2)
	if err != nil {
		t.Fatal(err)
	}
	got := d.input.Baseline
	if got == nil || got.McNemar != want.McNemar || got.Baseline.Accuracy != want.Baseline.Accuracy || got.CNN.Accuracy != d.input.Metrics.Accuracy {
		t.Fatalf("Gather's comparison %+v, CompareBaseline's %+v", got, want)
	}
	out := html.UnescapeString(render(t, d.report))
	sec := out[strings.Index(out, `<section id="metrics">`):strings.Index(out, `<section id="filters">`)]
	f := cnn.FiguresOf(*d.input.Metrics, want)
	sentence := f.McNemar.Sentence()
	for _, w := range []string{
		`<tr><td>CNN</td><td class="num">` + f.CNN.Accuracy.String() + `</td><td class="num">` + f.CNN.MacroF1.String() + `</td></tr>`,
		`<tr><td>Linear baseline<div class="small">TF-IDF n-grams + logistic regression, C = ` + strconv.FormatFloat(d.model.Baseline.Classifier.C, 'g', -1, 64) +
			`, the middle of the grid: there was no dev split</div></td><td class="num">` +
			f.Baseline.Accuracy.String() + `</td><td class="num">` + f.Baseline.MacroF1.String() + `</td></tr>`,
		"<p class=\"mcnemar\">T" + sentence[1:] + ".",
		"<p class=\"mcnemar\">" + mcnemarLine(d.model, *f.McNemar) + "</p>",
		"Accuracy (95% interval)",
	} {
		if !strings.Contains(sec, w) {
			t.Errorf("the evaluation lacks %q:\n%s", w, sec)
		}
	}
	if !strings.Contains(out, "Linear baseline accuracy</span><span class=\"v\">"+f.Baseline.Accuracy.String()+"<") {
		t.Error("the glance lacks the baseline's accuracy")
	}

	in := d.input
	in.Baseline = nil
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	out = html.UnescapeString(render(t, r))
	if strings.Contains(out, "Linear baseline") || !strings.Contains(out, "The model file carries no linear baseline") {
		t.Error("a report without the baseline shows one, or does not say it is missing")
	}
	// A model whose training was stopped before its baseline was fitted
	// says so, and does not advise training with the baseline it was
	// trained with.
	stopped := d.model.Clone()
	stopped.Baseline, stopped.Info.BaselineStopped = nil, true
	in.Model = stopped
	if r, err = New(in); err != nil {
		t.Fatal(err)
	}
	out = html.UnescapeString(render(t, r))
	if !strings.Contains(out, "carries no linear baseline, so the CNN is not shown beside one: training was stopped before the baseline was fitted") ||
		strings.Contains(out, "--baseline=false") {
		t.Error("a report of a model stopped before its baseline was fitted does not say so, or advises --baseline=false")
	}
	in.Model = d.model
	other := *want
	other.CNN.N++
	in.Baseline = &other
	if _, err := New(in); err == nil || !strings.Contains(err.Error(), "the baseline comparison is of") {
		t.Errorf("a comparison of other texts: %v", err)
	}
}
