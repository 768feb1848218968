package main

import (
	"crypto/sha256"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/report"
)

// auditOut is the part of audit --json the tests read.
type auditOut struct {
	audit.Result
	Story          string           `json:"story"`
	HeldoutSplit   string           `json:"heldout_split"`
	MarksFile      string           `json:"marks_file"`
	Stability      []audit.Stable   `json:"stability"`
	StableIn       int              `json:"stable_in"`
	Retrained      *audit.Retrained `json:"retrained"`
	RetrainedModel string           `json:"retrained_model"`
	MaskedModel    string           `json:"masked_model"`
	RetrainSkipped bool             `json:"retrain_skipped"`
}

// demoAuditModel trains the README tour's model (the default recipe, 8
// epochs, on the demo's training file with its test file) into dir.
func demoAuditModel(t *testing.T, dir string) string {
	t.Helper()
	model := filepath.Join(dir, "ferry.tt")
	if code, _, stderr := tt(t, "train", "--data", "testdata/demo/train.csv", "--test", "testdata/demo/test.csv", "--out", model,
		"--epochs", "8", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return model
}

func sha(t *testing.T, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

// TestAuditCommand runs telltale audit on the demo as the README's tour
// does. The demo corpus's README (testdata/demo/README.md) documents the
// two planted cues: the kiosk footer line (word "kioskmail") on 80% of
// lost-property training texts and the ticket stamp ("tkref" and five
// digits) on 75% of complaints.
func TestAuditCommand(t *testing.T) {
	if testing.Short() {
		t.Skip("trains the tour's model; skipped with -short")
	}
	dir := t.TempDir()
	model := demoAuditModel(t, dir)
	base := []string{"audit", "--model", model, "--data", "testdata/demo/train.csv", "--test", "testdata/demo/test.csv"}
	var res auditOut
	jsonOf(t, &res, append(base, "--json", "--quiet")...)
	t.Run("planted cues", func(t *testing.T) { checkPlanted(t, &res) })
	t.Run("text", func(t *testing.T) { checkAuditText(t, base, &res) })
	t.Run("retrain command", func(t *testing.T) { checkRetrainCommand(t, model, &res) })
	t.Run("export", func(t *testing.T) { checkAuditExport(t, base, &res) })
	t.Run("marks", func(t *testing.T) { checkMarks(t, model, base) })
	t.Run("masked-out", func(t *testing.T) { checkMaskedOut(t, base, &res) })
	t.Run("seeds and retrain", func(t *testing.T) { checkSeedsAndRetrain(t, model, base) })
	t.Run("nothing to retrain without", func(t *testing.T) { checkNothingToRetrain(t, base, &res) })
	t.Run("measure", func(t *testing.T) { checkMeasure(t, base, &res) })
}

// checkMeasure: --measure N measures the reliance of N cues (the demo has
// more associated cues than 40, and more than 5 frequent enough), and the
// text says so.
func checkMeasure(t *testing.T, base []string, res *auditOut) {
	if res.Measured != 40 {
		t.Errorf("by default the audit measured %d cues, want --measure's 40 (the demo has %d associated)", res.Measured, res.Associated)
	}
	for _, n := range []int{5, 60} {
		var got auditOut
		jsonOf(t, &got, append(base, "--measure", strconv.Itoa(n), "--json", "--quiet")...)
		if got.Measured != n || got.Associated != res.Associated {
			t.Errorf("--measure %d: %d of %d associated cues measured, want %d of %d", n, got.Measured, got.Associated, n, res.Associated)
		}
	}
	code, out, stderr := tt(t, append(base, "--measure", "5", "--quiet")...)
	if want := "had their reliance measured (--measure 5); the other " + count(res.Associated-5); code != 0 || !strings.Contains(out, want) {
		t.Errorf("audit --measure 5: exit %d (%s), the text does not say %q", code, stderr, want)
	}
}

// checkNothingToRetrain: with the cues acted on marked task (so none is
// acted on and none is marked artifact), --retrain has nothing to retrain
// without: the audit is still printed and --export written, as when
// --masked-out finds no mask, nothing is trained or written by
// --retrain-out, and the command fails (exit 1) saying why and what to do.
// --masked-out's message then does not send the user to --retrain, which
// would refuse too.
func checkNothingToRetrain(t *testing.T, base []string, res *auditOut) {
	dir := t.TempDir()
	marks := filepath.Join(dir, "task.marks")
	args := append(slices.Clone(base), "--marks", marks, "--quiet")
	var clean auditOut
	for _, c := range res.Action.Cues {
		args = append(args, "--mark-task", c)
	}
	jsonOf(t, &clean, append(args, "--json")...)
	if len(clean.Action.Cues) > 0 {
		t.Fatalf("with the cues acted on marked task, the audit still acts on %q: the case needs none", clean.Action.Cues)
	}
	args = append(slices.Clone(base), "--marks", marks, "--quiet")
	for _, asJSON := range []bool{false, true} {
		export, retrained := filepath.Join(dir, fmt.Sprintf("cues%v.csv", asJSON)), filepath.Join(dir, "without.tt")
		run := append(slices.Clone(args), "--retrain", "--retrain-out", retrained, "--export", export)
		if asJSON {
			run = append(run, "--json")
		}
		code, stdout, stderr := tt(t, run...)
		noCrash(t, "audit --retrain", stderr)
		if code != 1 || !strings.Contains(stderr, "--retrain trained nothing") || !strings.Contains(stderr, "--mark-artifact CUE") {
			t.Errorf("--json %v: exit %d, stderr %q; want 1 and why nothing was retrained", asJSON, code, stderr)
		}
		var got auditOut
		if asJSON {
			if err := json.Unmarshal([]byte(stdout), &got); err != nil || got.Associated != clean.Associated || got.Retrained != nil || !got.RetrainSkipped {
				t.Errorf("--json: the audit printed is not the audit (%v): %d cues associated, %d without --retrain; retrained %v, retrain_skipped %v",
					err, got.Associated, clean.Associated, got.Retrained, got.RetrainSkipped)
			}
		} else if !strings.HasPrefix(stdout, "Cue audit of ") || strings.Contains(stdout, "Retrained without") {
			t.Errorf("the text printed is not the audit alone:\n%.300s", stdout)
		}
		if _, err := os.Stat(export); err != nil {
			t.Errorf("--json %v: --export was not written: %v", asJSON, err)
		}
		if _, err := os.Stat(retrained); err == nil {
			t.Errorf("--retrain-out %s was written, with nothing retrained", retrained)
		}
	}
	masked := filepath.Join(dir, "masked.tt")
	code, stdout, stderr := tt(t, append(args, "--masked-out", masked)...)
	if code != 1 || stdout == "" || !strings.Contains(stderr, "was not written") || strings.Contains(stderr, "(--retrain)") {
		t.Errorf("--masked-out with nothing acted on: exit %d, stdout %d bytes, stderr %q; want 1, the audit, and no advice to use --retrain",
			code, len(stdout), stderr)
	}
}

// checkPlanted: the two planted cues are the first two artifact-like cues
// and the only cues acted on, on the test file (800 texts) halved.
func checkPlanted(t *testing.T, res *auditOut) {
	if res.HeldoutTexts != 800 || res.HeldoutSplit != "test" || res.SelectionTexts+res.ConfirmationTexts != 800 {
		t.Errorf("held-out: %d texts (%s), halves %d + %d; want the 800 of the test file", res.HeldoutTexts, res.HeldoutSplit,
			res.SelectionTexts, res.ConfirmationTexts)
	}
	if len(res.Ranked) < 2 {
		t.Fatalf("%d artifact-like cues, want the two planted ones", len(res.Ranked))
	}
	first := []string{res.Ranked[0].Text, res.Ranked[1].Text}
	slices.Sort(first)
	if !strings.Contains(first[0], "kioskmail") || !strings.HasPrefix(first[1], "tkref") {
		t.Errorf("first two artifact-like cues %q, want the footer line and the stamp", first)
	}
	if got := slices.Sorted(slices.Values(res.Action.Cues)); !slices.Equal(got, first) {
		t.Errorf("cues acted on %q, want the two planted ones %q", got, first)
	}
	// The quoted examples are numbered by their place in the test file.
	test, _, err := corpus.Load("testdata/demo/test.csv", corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	quoted := 0
	for _, c := range res.Ranked {
		if c.Confirmed == nil {
			continue
		}
		for _, e := range c.Confirmed.Examples {
			text := strings.Join(strings.Fields(test.Examples[e.Index].Text), " ")
			inner := strings.NewReplacer("[", "", "]", "").Replace(strings.Trim(e.Snippet, "…"))
			if !strings.Contains(text, inner) {
				t.Errorf("example %d quotes %q, which is not in test text %d: %q", e.Index, inner, e.Index, text)
			}
			quoted++
		}
	}
	if quoted == 0 {
		t.Error("no cue acted on quotes a text")
	}
	if cf := res.Action.Counterfactual; cf == nil || cf.AccuracyWithout.Low > cf.AccuracyWithout.Estimate || cf.AccuracyWithout.High < cf.AccuracyWithout.Estimate {
		t.Errorf("counterfactual accuracy without an interval around it: %+v", cf)
	}
}

// internalName matches a JSON key or Go field style name (flip_rate,
// flaggedShare) in the text.
var internalName = regexp.MustCompile(`\b[a-z]+_[a-z_]+\b|\b[a-z]+[A-Z][A-Za-z]+\b`)

// checkAuditText: the text opens with what was audited, where its figures
// come from (the confirming half, as the report says) and the story the
// JSON holds, then shows every listed cue with the words report.DescribeCue
// gives it (the report says the same), then the action; it names no
// internal field.
func checkAuditText(t *testing.T, base []string, res *auditOut) {
	code, out, stderr := tt(t, append(base, "--quiet")...)
	if code != 0 {
		t.Fatalf("audit: exit %d: %s", code, stderr)
	}
	head, rest, ok := strings.Cut(out, "\n\n")
	if !ok || !strings.HasPrefix(head, "Cue audit of ") || !strings.HasSuffix(head, "every figure below comes from the confirming half unless it says otherwise.") ||
		!strings.HasPrefix(rest, res.Story+"\n") {
		t.Fatalf("the text does not open with what was audited and the story:\n%.2000s", out)
	}
	at := len(head) + len(res.Story)
	// After the story, how many associated cues were measured, as the
	// JSON counts them.
	measured := fmt.Sprintf("\n\nOf the %s cues associated with a label in the training texts, %d had their reliance measured (--measure 40); the other %d",
		count(res.Associated), res.Measured, res.Associated-res.Measured)
	if end := len(head) + len("\n\n") + len(res.Story); res.Associated <= res.Measured || !strings.HasPrefix(out[end:], measured) {
		t.Errorf("the story is not followed by %q (the demo has more associated cues than --measure's 40)", measured)
	}
	for _, list := range [][]audit.Candidate{res.Ranked, res.Task} {
		for i := range list {
			ev := report.DescribeCue(&list[i], &res.Result, nil)
			for _, part := range []string{ev.Name + " → " + ev.Label + ": " + ev.Verdict, ev.Reliance, ev.Artifact, ev.Filters} {
				k := strings.Index(out[at:], part)
				if k < 0 {
					t.Errorf("cue %q: %q missing or out of order", list[i].Text, part)
					continue
				}
				at += k
			}
		}
	}
	if !strings.Contains(out[at:], "To act on it from the command line:") || !strings.Contains(out[at:], "--retrain --retrain-out") {
		t.Errorf("the action with its commands does not follow the cues")
	}
	// Cue texts and paths may hold anything: look at the rest.
	scrubbed := out
	for _, c := range append(slices.Clone(res.Ranked), res.Task...) {
		for _, s := range append([]string{c.Text, c.Surface, c.Pattern}, c.Words...) {
			scrubbed = strings.ReplaceAll(scrubbed, s, "")
		}
		for _, s := range c.Signals {
			scrubbed = strings.ReplaceAll(scrubbed, s.Says, "")
		}
	}
	for _, p := range base {
		scrubbed = strings.ReplaceAll(scrubbed, p, "")
	}
	if names := internalName.FindAllString(scrubbed, -1); len(names) > 0 {
		t.Errorf("the text names internal fields: %q", names)
	}
}

// checkAuditExport: --export writes one row per listed cue with the
// README's columns, and its figures are the JSON's.
func checkAuditExport(t *testing.T, base []string, res *auditOut) {
	path := filepath.Join(t.TempDir(), "cues.csv")
	if code, _, stderr := tt(t, append(base, "--export", path, "--quiet")...); code != 0 {
		t.Fatalf("audit --export: exit %d: %s", code, stderr)
	}
	recs := readRecords(t, path)
	if want := readmeColumns(t, "cues"); !slices.Equal(recs[0], want) {
		t.Errorf("columns %q, README lists %q", recs[0], want)
	}
	if len(recs)-1 != len(res.Ranked)+len(res.Task) {
		t.Fatalf("%d rows for %d + %d listed cues", len(recs)-1, len(res.Ranked), len(res.Task))
	}
	col := map[string]int{}
	for i, c := range recs[0] {
		col[c] = i
	}
	for i, c := range res.Ranked {
		row := recs[1+i]
		if row[col["cue"]] != c.Text || row[col["list"]] != "artifact-like" || row[col["verdict"]] != c.Verdict ||
			row[col["flip_rate"]] != cell(c.Confirmed.FlipRate.Estimate) || row[col["label_drop_low"]] != cell(c.Confirmed.LabelDrop.Low) {
			t.Errorf("row %d %q does not hold cue %q as the JSON does", i+1, row[:8], c.Text)
		}
	}
}

// cell is a number as the CSV export writes it.
func cell(x float64) string { return strconv.FormatFloat(x, 'g', 8, 64) }

// readmeColumns are the columns the README's export table lists for a table.
func readmeColumns(t *testing.T, table string) []string {
	t.Helper()
	b, err := os.ReadFile("README.md")
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range strings.Split(string(b), "\n") {
		if cells := strings.Split(l, "|"); len(cells) > 3 && strings.TrimSpace(cells[1]) == table {
			var cols []string
			for _, m := range regexp.MustCompile("`([a-z_]+)`").FindAllStringSubmatch(cells[3], -1) {
				cols = append(cols, m[1])
			}
			return cols
		}
	}
	t.Fatalf("the README's export table has no row %q", table)
	return nil
}

// checkMarks: marks are written beside the model, atomically, only by the
// mark options, and honoured; a bad mark or a failing audit writes nothing.
func checkMarks(t *testing.T, model string, base []string) {
	marks := audit.MarksPath(model)
	before := sha(t, model)
	code, _, stderr := tt(t, "audit", "--model", model, "--mark-artifact", "TKREF-48213", "--mark-task", "- - sent via kioskmail at the quayside terminal - -")
	if code != 0 || !strings.Contains(stderr, "marks written to "+marks) {
		t.Fatalf("marking: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	mk, err := audit.ReadMarks(marks, m)
	if err != nil {
		t.Fatal(err)
	}
	footer := strings.Fields("- - sent via kioskmail at the quayside terminal - -")
	if mk.Get([]string{"tkref", "-", audit.NumberWord}) != audit.MarkArtifact || mk.Get(footer) != audit.MarkTask || mk.Len() != 2 {
		t.Errorf("marks file holds %v", mk.Cues(audit.MarkArtifact))
	}
	if sha(t, model) != before {
		t.Error("marking changed the model file")
	}
	// Honoured: the footer, marked task, is never acted on and is listed
	// apart; the stamp is acted on as marked.
	var res auditOut
	jsonOf(t, &res, append(base, "--json", "--quiet")...)
	if slices.ContainsFunc(res.Action.Cues, func(c string) bool { return strings.Contains(c, "kioskmail") }) {
		t.Errorf("the footer, marked task, is acted on: %q", res.Action.Cues)
	}
	if !slices.ContainsFunc(res.Task, func(c audit.Candidate) bool { return c.Mark == audit.MarkTask && strings.Contains(c.Text, "kioskmail") }) {
		t.Error("the footer, marked task, is not listed apart")
	}
	if !slices.ContainsFunc(res.Ranked, func(c audit.Candidate) bool { return c.Mark == audit.MarkArtifact && c.Verdict == audit.VerdictActed }) {
		t.Error("the stamp, marked artifact, is not acted on")
	}
	// The mark never stands in for the measured figure: no signal weighs
	// 1, so a measured artifact-likeness stays below 1.
	for _, c := range res.Ranked {
		if c.Mark == audit.MarkArtifact && !(c.ArtifactLikeness > 0 && c.ArtifactLikeness < 1) {
			t.Errorf("the stamp, marked artifact, shows artifact-likeness %v, not its measured figure", c.ArtifactLikeness)
		}
	}
	// A word the model does not know, or an audit that fails, writes nothing.
	kept := sha(t, marks)
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"audit", "--model", model, "--mark-artifact", "zzqx"}, 2, `holds "zzqx", which the model does not know`},
		{append(slices.Clone(base[:len(base)-2]), "--test", filepath.Join("testdata", "bad", "two-labels.csv"), "--unmark", "TKREF-1"), 1, "too few"},
	} {
		code, _, stderr := tt(t, c.args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want %d and %q", c.args, code, stderr, c.code, c.want)
		}
	}
	if sha(t, marks) != kept {
		t.Error("a refused mark or a failed audit changed the marks file")
	}
	// Unmarking both leaves an empty marks file.
	if code, _, stderr := tt(t, "audit", "--model", model, "--unmark", "tkref - <number>", "--unmark", strings.Join(footer, " "), "--quiet"); code != 0 {
		t.Fatalf("unmarking: exit %d: %s", code, stderr)
	}
	if mk, err := audit.ReadMarks(marks, m); err != nil || mk.Len() != 0 {
		t.Errorf("after unmarking: %v, %v", mk, err)
	}
}

// checkMaskedOut: --masked-out writes the mask the audit suggests, or
// nothing and fails when it suggests none.
func checkMaskedOut(t *testing.T, base []string, res *auditOut) {
	out := filepath.Join(t.TempDir(), "masked.tt")
	code, _, stderr := tt(t, append(base, "--masked-out", out, "--quiet")...)
	_, statErr := os.Stat(out)
	if !res.Action.Suggested() {
		if code != 1 || statErr == nil || !strings.Contains(stderr, "was not written") {
			t.Errorf("no mask suggested: exit %d, file written %v, stderr %q; want exit 1 and no file", code, statErr == nil, stderr)
		}
		return
	}
	if code != 0 {
		t.Fatalf("audit --masked-out: exit %d: %s", code, stderr)
	}
	m, err := cnn.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	for g := range m.Config.NumFilters() {
		if m.IsMasked(g) != slices.Contains(res.Action.Mask, g) {
			t.Errorf("filter %d masked %v in %s, suggested mask %v", g, m.IsMasked(g), out, res.Action.Mask)
		}
	}
}

// checkSeedsAndRetrain: --seeds 1 audits a second model of the recipe and
// merges both audits; --retrain compares the models on the audit's
// confirming half, where its "before" figures are the audit's own, and
// writes the retrained model with its linear baseline.
func checkSeedsAndRetrain(t *testing.T, model string, base []string) {
	dir := t.TempDir()
	retrained := filepath.Join(dir, "without.tt")
	code, raw, stderr := tt(t, append(base, "--seeds", "1", "--retrain", "--retrain-out", retrained, "--json", "--quiet")...)
	var res auditOut
	if err := json.Unmarshal([]byte(raw), &res); code != 0 || err != nil {
		t.Fatalf("audit --seeds 1 --retrain: exit %d, %v: %s", code, err, stderr)
	}
	checkJSONDocumented(t, []byte(raw))
	if len(res.Stability) == 0 || res.Stability[0].Models != 2 || res.StableIn != 2 {
		t.Errorf("stability over %+v (stable in %d), want 2 models", res.Stability, res.StableIn)
	}
	// The models are compared on the confirming half alone (the choosing
	// half chose the cues): the audited model's accuracy there (through
	// cnn.Evaluate) is the audit's own on that half (through the slot table).
	rt := res.Retrained
	if rt == nil {
		t.Fatal("audit --retrain --json has no retrained")
	}
	if rt.Texts != res.ConfirmationTexts || res.ConfirmationTexts >= 800 || rt.Removed == 0 || res.RetrainedModel != retrained {
		t.Fatalf("retrained on %d texts, the confirming half has %d of test.csv's 800: %+v", rt.Texts, res.ConfirmationTexts, rt)
	}
	if cf := res.Action.Counterfactual; cf == nil || rt.Original.Before != cf.Accuracy {
		t.Errorf("the audited model scores %+v on the texts compared, the audit %+v on its confirming half", rt.Original.Before, cf)
	}
	// The retrained model keeps the audited model's recipe, its linear
	// baseline included.
	if rm, err := cnn.Load(retrained); err != nil || rm.Baseline == nil {
		t.Errorf("the retrained model %s carries no linear baseline (%v)", retrained, err)
	}
	if rt.Counterfactual.Before.Estimate <= rt.Original.Before.Estimate {
		t.Errorf("the model without the planted cues scores %v, with them %v: taking the cues out should help it on the demo's test file",
			rt.Counterfactual.Before.Estimate, rt.Original.Before.Estimate)
	}
}

// storyCommands are the command lines the story gives to retrain without
// the cues: the lines indented by four spaces after the one that says so.
func storyCommands(story string) []string {
	_, rest, ok := strings.Cut(story, "These commands write the patterns")
	if !ok {
		return nil
	}
	var cmds []string
	for _, l := range strings.Split(rest, "\n")[2:] {
		c, ok := strings.CutPrefix(l, "    ")
		if !ok {
			break
		}
		cmds = append(cmds, c)
	}
	return cmds
}

// checkRetrainCommand: /bin/sh (the reference of the quoting) runs the
// story's commands as they are printed, with telltale on the PATH: they
// write the patterns of the cues acted on to a file beside the model and
// train the model's recipe on its own splits (the same --test file, the
// same 8 epochs and seed) without the cues, whose words the new model's
// vocabulary then lacks.
func checkRetrainCommand(t *testing.T, model string, res *auditOut) {
	cmds := storyCommands(res.Story)
	if len(cmds) != 2 || !strings.HasPrefix(cmds[0], "printf ") || !strings.HasPrefix(cmds[1], "telltale train ") {
		t.Fatalf("the story's commands %q, want printf and telltale train:\n%s", cmds, res.Story)
	}
	for _, want := range []string{"--data testdata/demo/train.csv", "--test testdata/demo/test.csv", "--epochs 8", "--mask-tokens"} {
		if !strings.Contains(cmds[1], want) {
			t.Errorf("the train command %q lacks %q", cmds[1], want)
		}
	}
	bin := buildBinary(t)
	sh := exec.Command("/bin/sh", "-c", strings.Join(cmds, "\n"))
	sh.Env = append(os.Environ(), "PATH="+filepath.Dir(bin)+string(os.PathListSeparator)+os.Getenv("PATH"))
	if out, err := sh.CombinedOutput(); err != nil {
		t.Fatalf("/bin/sh ran the story's commands: %v\n%s", err, out)
	}
	base := strings.TrimSuffix(model, ".tt")
	cues, err := os.ReadFile(base + ".cues")
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Split(strings.TrimSuffix(string(cues), "\n"), "\n"); !slices.Equal(got, res.Action.Patterns) {
		t.Errorf("the patterns file holds %q, the audit's patterns are %q", got, res.Action.Patterns)
	}
	before, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	after, err := cnn.Load(base + "-without.tt")
	if err != nil {
		t.Fatal(err)
	}
	if a, b := after.Info.Splits, before.Info.Splits; a == nil || a.TestFile != b.TestFile || a.Fingerprint != b.Fingerprint || a.Seed != b.Seed ||
		a.DevFrac != b.DevFrac || a.Train != b.Train {
		t.Errorf("the retrained model's splits %+v, the audited model's %+v", a, b)
	}
	if after.Info.Recipe.Epochs != before.Info.Recipe.Epochs {
		t.Errorf("retrained for %d epochs, the model for %d", after.Info.Recipe.Epochs, before.Info.Recipe.Epochs)
	}
	for _, w := range []string{"kioskmail", "tkref"} {
		if slices.Contains(after.Vocab, w) || !slices.Contains(before.Vocab, w) {
			t.Errorf("%q in the vocabulary: %v before, %v after retraining without the cues", w, slices.Contains(before.Vocab, w), slices.Contains(after.Vocab, w))
		}
	}
}

// The retrain command line of a model whose dev and test files could be
// read only once at training (pipes) names placeholders, or the --test
// given now, never the paths that name nothing any more.
func TestRetrainArgsReadOnceSplits(t *testing.T) {
	m := &cnn.Model{}
	tc, _ := cnn.DefaultRecipe().Train.WithDefaults()
	m.Info.Recipe = &tc
	m.Info.Splits = &cnn.SplitRecord{Data: "d.csv", DevFile: "/dev/fd/62", DevPipe: true, TestFile: "/dev/fd/63", TestPipe: true, Seed: 1}
	src := auditSource{data: "d.csv", read: &readOptions{}, m: m, es: &evalSet{dev: &corpus.Dataset{}}}
	for _, c := range []struct{ test, want string }{{"", "--dev DEV-FILE --test TEST-FILE"}, {"t.csv", "--dev DEV-FILE --test t.csv"}} {
		src.test = c.test
		if got := strings.Join(src.trainArgs(), " "); !strings.Contains(got, c.want) || strings.Contains(got, "/dev/fd") {
			t.Errorf("--test %q: %q, want %q and no /dev/fd path", c.test, got, c.want)
		}
	}
}

// TestRetrainArgs: the train command the story prints makes the model's
// splits and recipe again, every option as train reads it: the split
// record's shares, files and seed, the audit's reading options, and each
// recipe setting that differs from train's default (a boolean as
// --name=value).
func TestRetrainArgs(t *testing.T) {
	m := &cnn.Model{Config: cnn.Config{Dim: 64, Widths: []int{2, 3}, Filters: 100, Dropout: 0.4, MaxNorm: 3},
		Tokenizer: corpus.TokenizerConfig{Lower: false, MinCount: 2}}
	tc := cnn.DefaultRecipe().Train
	tc.Epochs, tc.Patience, tc.Seed = 5, -1, 7
	tc, _ = tc.WithDefaults()
	m.Info.Recipe = &tc
	m.Info.Splits = &cnn.SplitRecord{Data: "d.csv", DevFrac: 0.2, TestFrac: 0.1, Seed: 7}
	read := readOptions{TextCol: "body", Mail: "subject-body", Relabel: "spam-1=spam,easy-ham-1=ham", MaxTextBytes: corpus.DefaultMaxTextBytes}
	src := auditSource{model: "out/m.tt", data: "my data.csv", read: &read, m: m, es: &evalSet{dev: &corpus.Dataset{}}}
	got := src.retrainCommands([]string{"/(?i)\\btkref\\b/", "it's"})
	want := []string{`printf '%s\n' '/(?i)\btkref\b/' 'it'\''s' > out/m.cues`,
		"telltale train --data 'my data.csv' --dev-frac 0.2 --seed 7 --text-col body --mail subject-body --relabel spam-1=spam,easy-ham-1=ham " +
			"--dim 64 --widths 2,3 --dropout 0.4 --max-norm 3 --lower=false --min-count 2 --epochs 5 --patience 0 --wide=false --mask-tokens out/m.cues --out out/m-without.tt"}
	if !slices.Equal(got, want) {
		t.Errorf("commands\n%q\nwant\n%q", got, want)
	}
	// Data that is not the model's: its own file and --test, the recipe's seed.
	src.es, src.test = &evalSet{}, "t.csv"
	if got := src.trainArgs(); !slices.Contains(got, "--test") || slices.Contains(got, "--dev-frac") || !slices.Contains(got, "7") {
		t.Errorf("on other data: %q", got)
	}
	// The default recipe adds no recipe option.
	def := cnn.DefaultRecipe()
	dm := &cnn.Model{Config: def.Model, Tokenizer: def.Tokenizer}
	dt, _ := def.Train.WithDefaults()
	dm.Info.Recipe = &dt
	if got := recipeArgs(dm); len(got) != 0 {
		t.Errorf("the default recipe gives %q", got)
	}
	if got := unflaggedSettings(dm); len(got) != 0 {
		t.Errorf("the default recipe has settings train cannot give: %q", got)
	}
	// Settings only the Go API sets are named in a comment line after the
	// command, so it is not taken for the model's whole recipe.
	lib := dt
	lib.WideDecay, lib.EmbedDropout, lib.StopOn = 0.01, 0.1, cnn.StopLoss
	dm.Info.Recipe = &lib
	src.m = dm
	cmds := src.retrainCommands([]string{"tkref"})
	const note = "# train has no option for this model's stop_on loss, embed_dropout 0.1, wide_decay 0.01: the line above trains without them"
	if len(cmds) != 3 || cmds[2] != note {
		t.Errorf("commands for a recipe with library-only settings:\n%q\nwant a third line %q", cmds, note)
	}
	// What train's own options would set: no word weights (and so no
	// bigram weights), the word weights at the rest's rate (recorded as 0),
	// the words' weights alone, the character layer (its columns are not
	// --dim's), the dropouts and class weights.
	for _, c := range []struct {
		edit func(m *cnn.Model)
		want string
	}{
		{func(m *cnn.Model) { m.Config.Wide, m.Config.WideBigrams, m.Info.Recipe.WideLR = false, false, 0 }, "--wide=false"},
		{func(m *cnn.Model) { m.Info.Recipe.WideLR = 0 }, "--wide-lr 1"},
		{func(m *cnn.Model) { m.Config.WideBigrams = false }, "--wide-bigrams=false"},
		{func(m *cnn.Model) { m.Info.Recipe.WideFit = true }, "--wide-fit=true"},
		{func(m *cnn.Model) { m.Info.Recipe.WideFit, m.Info.Recipe.WideFitC = true, 0.25 }, "--wide-fit=true --wide-fit-c 0.25"},
		{func(m *cnn.Model) { m.Info.Recipe.WideFit, m.Info.Recipe.WideFitC = true, 0 }, "--wide-fit=true"},
		{func(m *cnn.Model) { m.Config.Wide, m.Config.WideBigrams, m.Info.Recipe.WideFit = false, false, true }, "--wide=false"},
		{func(m *cnn.Model) {
			m.Config.Wide, m.Config.WideBigrams, m.Info.Recipe.WideFit, m.Info.Recipe.WideFitC = false, false, true, 3
		}, "--wide=false"},
		{func(m *cnn.Model) {
			m.Config.Chars = &cnn.CharConfig{Filters: cnn.DefaultCharFilters, Width: cnn.DefaultCharWidth}
			m.Config.Dim += cnn.DefaultCharFilters
		}, "--chars"},
		{func(m *cnn.Model) {
			m.Config.Chars = &cnn.CharConfig{Filters: 20, Width: 4}
			m.Config.Dim = 84
		}, "--chars --char-maps 20 --char-width 4 --dim 64"},
		{func(m *cnn.Model) {
			m.Info.Recipe.TokenDropout, m.Info.Recipe.WordDropout, m.Info.Recipe.ClassWeight = 0, 0.5, "balanced"
		}, "--token-dropout 0 --word-dropout 0.5 --class-weight balanced"},
		// The rate: the default recipe's is Adam's (no option), Adadelta
		// recorded at its own default 1.0 needs none, another rate its own.
		{func(m *cnn.Model) { m.Info.Recipe.LR = 0.001 }, "--lr 0.001"},
		{func(m *cnn.Model) { m.Info.Recipe.KeepFrom = 5 }, "--keep-from 5"},
		{func(m *cnn.Model) { m.Info.Recipe.Optimizer, m.Info.Recipe.LR, m.Info.Recipe.Eps = "adadelta", 1, 1e-6 }, "--optimizer adadelta"},
		{func(m *cnn.Model) {
			m.Info.Recipe.Optimizer, m.Info.Recipe.LR, m.Info.Recipe.Eps = "adadelta", 0.002, 1e-6
		}, "--optimizer adadelta --lr 0.002"},
	} {
		m := &cnn.Model{Config: def.Model, Tokenizer: def.Tokenizer}
		m.Config.Widths = slices.Clone(def.Model.Widths)
		r := dt
		m.Info.Recipe = &r
		c.edit(m)
		if got := strings.Join(recipeArgs(m), " "); got != c.want {
			t.Errorf("recipeArgs gives %q, want %q", got, c.want)
		}
	}
}

// TestRetrainArgsWideFit: the retrain line's recipe options, read back by
// train, give the model's fitted start and its C (none without the
// start), whatever the default recipe has.
func TestRetrainArgsWideFit(t *testing.T) {
	def := cnn.DefaultRecipe()
	dt, _ := def.Train.WithDefaults()
	for _, fit := range []bool{false, true} {
		for _, c := range []float64{0, 0.25, 10, def.Train.WideFitC} {
			m := &cnn.Model{Config: def.Model, Tokenizer: def.Tokenizer}
			m.Config.Wide = true
			r := dt
			r.WideFit, r.WideFitC = fit, c
			m.Info.Recipe = &r
			args := recipeArgs(m)
			got := trainReads(t, args, r.Seed)
			wantC := c
			if !fit {
				wantC = 0 // train records no C without a fitted start
			}
			if got.WideFit != fit || got.WideFitC != wantC {
				t.Errorf("fitted start %v at C %g: train %q gives %v at C %g, want %v at %g", fit, c, args, got.WideFit, got.WideFitC, fit, wantC)
			}
		}
	}
}

// trainReads is the training configuration train's recipe options give
// for args (a retrain line's), failing t when train refuses them.
func trainReads(t *testing.T, args []string, seed uint64) cnn.TrainConfig {
	t.Helper()
	o := new(recipeOptions)
	fs := flag.NewFlagSet("train", flag.ContinueOnError)
	o.register(fs)
	if err := fs.Parse(args); err != nil {
		t.Fatalf("%q: %v", args, err)
	}
	if err := o.check(fs); err != nil {
		t.Fatalf("%q: %v", args, err)
	}
	return o.recipe(seed, 1).Train
}

// TestRetrainArgsKeepFrom: the retrain line's recipe options, read back
// by train, give the model's epochs and first epoch kept, one beyond the
// epochs included (cnn.TrainConfig.KeepFrom then means the last).
func TestRetrainArgsKeepFrom(t *testing.T) {
	def := cnn.DefaultRecipe()
	dt, _ := def.Train.WithDefaults()
	for _, c := range []struct{ epochs, keep int }{{20, 0}, {20, 5}, {3, 5}, {3, 3}, {def.Train.Epochs, def.Train.KeepFrom}} {
		m := &cnn.Model{Config: def.Model, Tokenizer: def.Tokenizer}
		r := dt
		r.Epochs, r.KeepFrom = c.epochs, c.keep
		m.Info.Recipe = &r
		args := recipeArgs(m)
		if got := trainReads(t, args, r.Seed); got.Epochs != c.epochs || got.KeepFrom != c.keep {
			t.Errorf("epochs %d, keep from %d: train %q gives %d, %d", c.epochs, c.keep, args, got.Epochs, got.KeepFrom)
		}
	}
}

// TestAuditRefusals: options that cannot work are refused before any work
// with a message naming them.
func TestAuditRefusals(t *testing.T) {
	f := makeCaseFiles(t)
	a := func(args ...string) []string {
		return append([]string{"audit", "--model", f.model, "--data", f.data}, args...)
	}
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{a("--seeds", "30"), 2, "--seeds 30: give at most 20"},
		{a("--measure", "0"), 2, "--measure 0: give 1 or more"},
		{[]string{"audit", "--model", f.model, "--mark-task", "ferry", "--measure", "5"}, 2, "--measure needs --data"},
		{a("--seeds", "-1"), 2, "--seeds -1: give 0 or more"},
		{a("--seeds", "2", "--models", f.model+"x"), 2, "give --seeds N or --models, not both"},
		{a("--stable-in", "2"), 2, "--stable-in needs --seeds or --models"},
		{a("--retrain-out", filepath.Join(f.dir, "r.tt")), 2, "--retrain-out needs --retrain"},
		{a("--confirming-out", filepath.Join(f.dir, "c.txt")), 2, "c.txt: the file must end in .csv, .tsv or .jsonl"},
		{[]string{"audit", "--model", f.model, "--mark-task", "ferry", "--confirming-out", filepath.Join(f.dir, "c.csv")}, 2, "--confirming-out needs --data"},
		{a("--vectors", "v.txt"), 2, "--vectors is for training"},
		{a("--models", f.model), 2, "the model itself is always audited"},
		{a("--mark-task", "ferry", "--unmark", " ferry "), 2, `the cue "ferry" is given to --mark-task and --unmark`},
		{a("--mark-task", " "), 2, "give the cue's words, in quotes"},
		{[]string{"audit", "--model", f.model, "--mark-task", "ferry", "--export", filepath.Join(f.dir, "x.csv")}, 2, "--export needs --data"},
		{[]string{"audit", "--model", f.model}, 2, "--data is required"},
		{a("--marks", filepath.Join(f.dir, "none.marks")), 2, "none.marks: no such file: check the path"},
		{a("--models", tinyModelOther(t)), 2, "was not trained on the splits of --model"},
		{a("--retrain"), 1, "is not the data " + f.model + " was trained on"},
		// Too few held-out texts: the test split held out of the model's own
		// data, or a file.
		{[]string{"audit", "--model", f.model, "--data", modelData(t, f.model)}, 1, "train the model again with a larger --test-frac"},
		{a("--test", f.tiny), 1, "give a larger test file (--test FILE)"},
	} {
		code, _, stderr := tt(t, c.args...)
		noCrash(t, "audit", stderr)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want %d and %q", c.args[5:], code, stderr, c.code, c.want)
		}
	}
}

// modelData is the data file the model at path was trained on.
func modelData(t *testing.T, path string) string {
	t.Helper()
	m, err := cnn.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	return m.Info.Splits.Data
}

// tinyModelOther is a tiny model trained on other texts than tinyModel's.
func tinyModelOther(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	data := demoPart(t, dir, 500)
	model := filepath.Join(dir, "other.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return model
}

// checkJSONDocumented: every key of the audit's JSON output, at any
// depth, is in the README's documentation of it.
func checkJSONDocumented(t *testing.T, raw []byte) {
	t.Helper()
	checkKeysDocumented(t, "audit", raw, "### The audit's JSON")
}

// TestShellQuote: the commands the audit prints give each argument back
// whole to a POSIX shell (/bin/sh, the reference); plain words stay bare.
func TestShellQuote(t *testing.T) {
	for _, s := range []string{"tkref - <number>", "won't", `"><img src=x>`, "$HOME `ls` \\ !", "a\nb", "", "bin/demo/ferry.tt", "x=1,y@2"} {
		out, err := exec.Command("/bin/sh", "-c", "printf '%s' "+shellQuote(s)).Output()
		if err != nil || string(out) != s {
			t.Errorf("sh reads %q back as %q (%v)", s, out, err)
		}
	}
	if got := shellJoin([]string{"--data", "bin/demo/train.csv"}); got != "--data bin/demo/train.csv" {
		t.Errorf("plain words quoted: %s", got)
	}
	for _, c := range []struct {
		n    int
		want string
	}{{0, "0"}, {999, "999"}, {1000, "1,000"}, {1234567, "1,234,567"}, {-4500, "-4,500"}} {
		if got := count(c.n); got != c.want {
			t.Errorf("count(%d) = %q, want %q", c.n, got, c.want)
		}
	}
}

// TestAuditBadInputMessages: each bad input of the audit gives one message
// that says its cause once, naming the file, the line where there is one,
// and the fix: no sentinel's text ("bad input") as a tail, no package name
// repeating the command's ("telltale audit: audit:"), each of the cause's
// words once.
func TestAuditBadInputMessages(t *testing.T) {
	f := makeCaseFiles(t)
	bad := func(name string) string { return filepath.Join("testdata", "bad", name) }
	write := func(name, content string) string {
		p := filepath.Join(f.dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	garbage := write("garbage.marks", "garbage\n")
	unknown := write("unknown.marks", "# a word the model never saw\nartifact zzqqxx\n")
	var odd strings.Builder
	odd.WriteString("text,label\n")
	for i := range 70 {
		fmt.Fprintf(&odd, "message number %d about the ferry,%s\n", i, []string{"bookings", "weird"}[min(i, 1)])
	}
	oddLabel := write("odd.csv", odd.String())
	a := func(args ...string) []string {
		return append([]string{"audit", "--model", f.model, "--data", f.data, "--quiet"}, args...)
	}
	for _, c := range []struct {
		name string
		args []string
		code int
		want []string // each once in stderr
	}{
		{"missing file", []string{"audit", "--model", f.model, "--data", filepath.Join(f.dir, "none.csv")}, 2,
			[]string{"none.csv: no such file", "check the path"}},
		{"wrong columns", []string{"audit", "--model", f.model, "--data", bad("no-text-column.csv")}, 2,
			[]string{"no-text-column.csv line 1", "which column holds the text", "--text-col"}},
		{"empty file", []string{"audit", "--model", f.model, "--data", bad("empty.csv")}, 2,
			[]string{"empty.csv", "file is empty", "header row"}},
		{"empty test file", a("--test", bad("empty.csv")), 2, []string{"empty.csv", "file is empty", "header row"}},
		{"test label the model does not know", a("--test", oddLabel), 1,
			[]string{"odd.csv", "odd.csv line 3", `label "weird"`, "relabel"}},
		{"too few test texts", a("--test", f.tiny), 1, []string{"two-labels.csv", "too few for the tests", "give a larger test file (--test FILE)"}},
		{"bad marks line", a("--marks", garbage), 1, []string{"garbage.marks line 1", `"garbage"`, "a line starts with artifact or task"}},
		{"marked word unknown", a("--marks", unknown), 1, []string{"unknown.marks line 2", `"zzqqxx"`, "remove the line"}},
		{"missing --models", a("--models", filepath.Join(f.dir, "none.tt")), 2, []string{"--models " + filepath.Join(f.dir, "none.tt") + ": no such file", "check the path"}},
		{"--models not a model", a("--models", f.data), 1, []string{"part.csv", "not a telltale model file", "give a file written by telltale train"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := tt(t, c.args...)
			noCrash(t, "audit", stderr)
			if code != c.code {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, c.code, stderr)
			}
			for _, w := range c.want {
				if n := strings.Count(stderr, w); n != 1 {
					t.Errorf("stderr holds %q %d times, want once:\n%s", w, n, stderr)
				}
			}
			if n := strings.Count(stderr, "telltale audit:"); n != 1 {
				t.Errorf("%d messages, want one:\n%s", n, stderr)
			}
			for _, repeat := range []string{"bad input", "telltale audit: audit:"} {
				if strings.Contains(stderr, repeat) {
					t.Errorf("stderr holds %q:\n%s", repeat, stderr)
				}
			}
		})
	}
}

// Every setting of the training recipe reaches the retrain command: a
// recipe that differs from the default in any one field of
// cnn.TrainConfig gives other train options (recipeArgs) or names the
// setting in the comment line (unflaggedSettings), or, for the patterns
// the recipe takes out (MaskTokens), adds them to the patterns file the
// first line writes (retrainCommands). Seed is --seed, which
// trainArgs writes from the split record, and Threads is how a run is
// spread over cores, not part of what it learns. The same holds for the
// tokenizer's settings but the pieces WordPiece learns and the file's
// bytes (--tokenizer names the file). The fields are walked by reflection,
// so a new setting that neither covers fails here.
func TestRetrainCoversEveryTrainSetting(t *testing.T) {
	def := cnn.DefaultRecipe()
	described := func(k corpus.TokenizerConfig, tc cnn.TrainConfig) string {
		tc, err := tc.WithDefaults()
		if err != nil {
			t.Fatalf("%+v: %v", tc, err)
		}
		m := &cnn.Model{Config: def.Model, Tokenizer: k}
		m.Info.Recipe = &tc
		// MaskTokens reach the patterns file the story's first line writes
		// (retrainCommands), not an option of their own.
		cmds := auditSource{model: "m.tt", data: "d.csv", read: &readOptions{MaxTextBytes: corpus.DefaultMaxTextBytes}, es: &evalSet{}, m: m}.retrainCommands([]string{"tkref"})
		return strings.Join(recipeArgs(m), " ") + " # " + strings.Join(unflaggedSettings(m), ", ") + " | " + cmds[0]
	}
	// Values train's checks accept, where the zero value's change would not.
	valid := map[string]string{"Optimizer": "adadelta", "ClassWeight": "balanced", "EmbedInit": cnn.InitPPMI,
		"StopOn": cnn.StopLoss, "File": "t.json", "MaskTokens": `/(?i)\bkioskmail\b/`}
	skip := map[string]bool{"Seed": true, "Threads": true, "SubwordPieces": true, "FileJSON": true}
	for _, f := range reflect.VisibleFields(reflect.TypeFor[cnn.TrainConfig]()) {
		if skip[f.Name] {
			continue
		}
		base := def.Train
		if strings.HasPrefix(f.Name, "WideFit") {
			base.WideFit = true // the fitted start's own settings need it
		}
		changed := base
		changeField(t, reflect.ValueOf(&changed).Elem().FieldByIndex(f.Index), f.Name, valid)
		if a, b := described(def.Tokenizer, base), described(def.Tokenizer, changed); a == b {
			t.Errorf("%s changed: the retrain command stays %q", f.Name, a)
		}
	}
	for _, f := range reflect.VisibleFields(reflect.TypeFor[corpus.TokenizerConfig]()) {
		if skip[f.Name] {
			continue
		}
		base := def.Tokenizer
		base.Subword = strings.HasPrefix(f.Name, "Subword") // its size needs it
		changed := base
		changeField(t, reflect.ValueOf(&changed).Elem().FieldByIndex(f.Index), f.Name, valid)
		if a, b := described(base, def.Train), described(changed, def.Train); a == b {
			t.Errorf("tokenizer %s changed: the retrain command stays %q", f.Name, a)
		}
	}
	// What train --subword records (the size it trained, DefaultSubwordSize
	// for none given) is what --subword gives again: no comment line.
	enc, err := corpus.TrainEncoder(corpus.TokenizerConfig{Lower: true, MinCount: 1, Subword: true},
		[]string{"the quayside kiosk", "a kiosk by the quay", "ferries at the quayside"})
	if err != nil {
		t.Fatal(err)
	}
	m := &cnn.Model{Config: def.Model, Tokenizer: enc.Tok.Config()}
	if got := unflaggedSettings(m); len(got) != 0 {
		t.Errorf("a model trained with --subword: %q, want no setting train cannot give", got)
	}
}

// changeField sets v, the field name of a settings struct, to a value
// other than its own: a boolean negated, a number moved, a string from
// valid.
func changeField(t *testing.T, v reflect.Value, name string, valid map[string]string) {
	t.Helper()
	switch v.Kind() {
	case reflect.Bool:
		v.SetBool(!v.Bool())
	case reflect.Int:
		v.SetInt(v.Int() + 2)
	case reflect.Float64:
		if x := v.Float(); x == 0 {
			v.SetFloat(0.5)
		} else {
			v.SetFloat(x / 2)
		}
	case reflect.String:
		v.SetString(valid[name])
	case reflect.Slice:
		if v.Type().Elem().Kind() != reflect.String {
			t.Fatalf("field %s of kind %s: teach the test a value", name, v.Type())
		}
		v.Set(reflect.ValueOf([]string{valid[name]}))
	default:
		t.Fatalf("field %s of kind %s: teach the test a value", name, v.Kind())
	}
}

// TestRetrainCommandsMaskOrder: the story's MODEL.cues holds the model's
// own token mask first, then the cues not in it: the order audit --retrain
// records (audit.Retrain), so that the two ways of retraining make models
// of one recipe.
func TestRetrainCommandsMaskOrder(t *testing.T) {
	tc, _ := cnn.DefaultRecipe().Train.WithDefaults()
	tc.MaskTokens = []string{"/x/", "tkref"}
	m := &cnn.Model{Config: cnn.DefaultRecipe().Model, Tokenizer: cnn.DefaultRecipe().Tokenizer}
	m.Info.Recipe = &tc
	src := auditSource{model: "m.tt", data: "d.csv", read: &readOptions{MaxTextBytes: corpus.DefaultMaxTextBytes}, es: &evalSet{}, m: m}
	cmds := src.retrainCommands([]string{"cue", "tkref"})
	if want := `printf '%s\n' /x/ tkref cue > m.cues`; len(cmds) == 0 || cmds[0] != want {
		t.Errorf("commands %q, want first %q", cmds, want)
	}
}

// TestCueChoiceHeldout: the record of the texts that chose names what was
// held out: "test" for the model's own test split, the absolute path of
// --test for another test file, and of --data when all of it was held out
// (data that is not the model's).
func TestCueChoiceHeldout(t *testing.T) {
	m := &cnn.Model{}
	m.Info.Splits = &cnn.SplitRecord{Data: "d.csv", DataAbs: absPath("d.csv"), TestFrac: 0.1, Seed: 1}
	ds := &corpus.Dataset{Examples: []corpus.Example{{Text: "a", Label: "x"}, {Text: "b", Label: "y"}}}
	res := &audit.Result{Selection: []int{1}}
	for _, c := range []struct {
		name       string
		data, test string
		es         evalSet
		want       string
	}{
		{"the model's test split", "d.csv", "", evalSet{test: ds, name: "test"}, "test"},
		{"another test file", "d.csv", "t.csv", evalSet{test: ds, name: "test"}, absPath("t.csv")},
		{"other data, all of it", "other.csv", "", evalSet{test: ds, all: ds, name: "all"}, absPath("other.csv")},
	} {
		o := &auditOptions{data: c.data, test: c.test, seed: 3}
		got := o.choice(m, &c.es, res, cnn.ChoseMask)
		if got.Heldout != c.want || got.Of != 2 || got.Seed != 3 || !slices.Equal(got.Texts, []int{1}) {
			t.Errorf("%s: %+v, want heldout %q", c.name, got, c.want)
		}
	}
}
