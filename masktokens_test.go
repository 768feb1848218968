package main

import (
	"context"
	"encoding/json"
	"html"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/cnn"
)

// stampPattern takes the demo's ticket stamp out ("TKREF-48213"; the demo
// corpus's README, testdata/demo/README.md, documents it as planted on 75%
// of complaints).
const stampPattern = `/(?i)\btkref\s*-\s*[0-9]+\b/`

// TestMaskTokensRecorded: a model trained with --mask-tokens records the
// patterns in its recipe (train --json's mask_tokens, the model file's
// info.recipe.mask_tokens), and every path that trains the model's recipe
// again takes them out too: audit --seeds (trainingRecipe, then
// cnn.TrainText) and audit --retrain, whose model records them before the
// cues' patterns and whose vocabulary lacks the stamp's word, as the
// model's does. The retrained model records the half of the test split
// that chose the cues; eval, compare and report on that test split warn of
// it, and eval on the confirming half alone does not (DEVELOPERS.md: the
// test split is never used for a choice).
func TestMaskTokensRecorded(t *testing.T) {
	if testing.Short() {
		t.Skip("trains and retrains a model of the demo; skipped with -short")
	}
	dir := t.TempDir()
	data := demoPart(t, dir, 1500)
	test := filepath.Join("testdata", "demo", "test.csv")
	mt := filepath.Join(dir, "mt.txt")
	if err := os.WriteFile(mt, []byte(stampPattern+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "mk.tt")
	var tr struct {
		MaskTokens []string `json:"mask_tokens"`
	}
	code, js, stderr := tt(t, "train", "--data", data, "--test", test, "--out", model, "--epochs", "3", "--mask-tokens", mt, "--json", "--quiet")
	if err := json.Unmarshal([]byte(js), &tr); code != 0 || err != nil {
		t.Fatalf("train --mask-tokens: exit %d, %v: %s", code, err, stderr)
	}
	checkKeysDocumented(t, "train", []byte(js), "### The JSON of train, eval and compare")
	if !slices.Equal(tr.MaskTokens, []string{stampPattern}) {
		t.Errorf("train --json: mask_tokens %q, want %q", tr.MaskTokens, stampPattern)
	}
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	if r := m.Info.Recipe; r == nil || !slices.Equal(r.MaskTokens, []string{stampPattern}) || slices.Contains(m.Vocab, "tkref") {
		t.Fatalf("the model records the mask %+v, tkref in its vocabulary: %v", r, slices.Contains(m.Vocab, "tkref"))
	}
	t.Run("seeds", func(t *testing.T) { checkSeedsMask(t, m, model, data, test) })
	retrained, res := checkRetrainMask(t, dir, model, data, test)
	t.Run("cues chosen", func(t *testing.T) { checkCuesChosen(t, dir, model, retrained, data, test, res) })
}

// checkSeedsMask: the recipe audit --seeds trains (trainingRecipe) takes
// the recorded patterns out: a model trained with it lacks the stamp's
// word.
func checkSeedsMask(t *testing.T, m *cnn.Model, model, data, test string) {
	o := &auditOptions{model: model, data: data, test: test, seeds: 1}
	es, err := findTestSplit(m, data, test, &o.read, io.Discard, true)
	if err != nil {
		t.Fatal(err)
	}
	r, err := o.trainingRecipe(m, es)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(r.Train.MaskTokens, []string{stampPattern}) {
		t.Fatalf("--seeds' recipe takes out %q, want %q", r.Train.MaskTokens, stampPattern)
	}
	r.Train.Epochs, r.Baseline = 1, nil
	tr, err := cnn.TrainText(context.Background(), es.train, es.dev, *r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if slices.Contains(tr.Model.Vocab, "tkref") || !slices.Contains(tr.Model.Vocab, "kioskmail") {
		t.Errorf("a model of --seeds' recipe: tkref in its vocabulary %v (want false), kioskmail %v (want true)",
			slices.Contains(tr.Model.Vocab, "tkref"), slices.Contains(tr.Model.Vocab, "kioskmail"))
	}
}

// checkRetrainMask: audit --retrain (which acts on the kiosk footer line,
// the demo's other planted cue) takes the recorded patterns out with the
// cues', says so, and the retrained model records both.
func checkRetrainMask(t *testing.T, dir, model, data, test string) (string, *auditOut) {
	retrained := filepath.Join(dir, "mk-re.tt")
	var res auditOut
	code, raw, stderr := tt(t, "audit", "--model", model, "--data", data, "--test", test, "--retrain", "--retrain-out", retrained, "--json", "--quiet")
	if err := json.Unmarshal([]byte(raw), &res); code != 0 || err != nil {
		t.Fatalf("audit --retrain: exit %d, %v: %s", code, err, stderr)
	}
	checkJSONDocumented(t, []byte(raw))
	rt := res.Retrained
	if rt == nil || !slices.Equal(rt.RecipeMask, []string{stampPattern}) || !slices.Equal(res.Action.RecipeMask, []string{stampPattern}) {
		t.Fatalf("audit --retrain --json: retrained %+v, action's recipe_mask_tokens %q; want the recorded %q", rt, res.Action.RecipeMask, stampPattern)
	}
	if !strings.Contains(res.Story, "The model's recipe takes 1 pattern out of the training text already") || !strings.Contains(res.Story, stampPattern) {
		t.Errorf("the story does not say the recipe takes the stamp out:\n%s", res.Story)
	}
	rm, err := cnn.Load(retrained)
	if err != nil {
		t.Fatal(err)
	}
	want := append([]string{stampPattern}, rt.Patterns...)
	if got := rm.Info.Recipe.MaskTokens; !slices.Equal(got, want) {
		t.Errorf("the retrained model records the mask %q, want %q", got, want)
	}
	for _, w := range []string{"tkref", "kioskmail"} {
		if slices.Contains(rm.Vocab, w) {
			t.Errorf("%q is in the retrained model's vocabulary", w)
		}
	}
	return retrained, &res
}

// checkCuesChosen: the retrained model records the audit's choosing half
// of test.csv; eval (text and --json), compare and report on test.csv warn
// that those texts chose the cues, and eval on the confirming half alone
// does not. The model audit --masked-out writes warns the same way of the
// half that chose its mask.
func checkCuesChosen(t *testing.T, dir, model, retrained, data, test string, res *auditOut) {
	rm, err := cnn.Load(retrained)
	if err != nil {
		t.Fatal(err)
	}
	if cc := rm.Info.CuesChosenOn; len(cc) != 1 || cc[0].Half != "selection" || cc[0].For != cnn.ChoseRetrain || cc[0].Heldout != "test" || cc[0].Of != 800 ||
		len(cc[0].Texts) != res.SelectionTexts {
		t.Fatalf("the retrained model records the cues chosen on %+v; want the %d texts of test.csv's choosing half", cc, res.SelectionTexts)
	}
	warning := strconv.Itoa(res.SelectionTexts) + " of these 800 texts are the audit's choosing half"
	var ev struct {
		Warnings []string `json:"warnings"`
	}
	jsonOf(t, &ev, "eval", "--model", retrained, "--data", data, "--json", "--quiet")
	if !slices.ContainsFunc(ev.Warnings, func(w string) bool { return strings.HasPrefix(w, warning) }) {
		t.Errorf("eval --json on the recorded test split: warnings %q, want one starting %q", ev.Warnings, warning)
	}
	if code, _, stderr := tt(t, "eval", "--model", retrained, "--data", data); code != 0 || !strings.Contains(stderr, "warning: "+warning) {
		t.Errorf("eval: exit %d, no warning %q:\n%s", code, warning, stderr)
	}
	// compare gives the warning to the retrained model alone, first or
	// second, on a --test file and on the splits of --data both share.
	has := func(ws []string) bool {
		return slices.ContainsFunc(ws, func(w string) bool { return strings.HasPrefix(w, warning) })
	}
	for _, c := range []struct {
		models         string
		texts          []string
		retrainedFirst bool
	}{
		{model + "," + retrained, []string{"--data", data, "--test", test}, false},
		{retrained + "," + model, []string{"--data", data}, true},
		{model + "," + retrained, []string{"--data", data}, false},
	} {
		var rows []compareRow
		jsonOf(t, &rows, append(append([]string{"compare", "--models", c.models}, c.texts...), "--json", "--quiet")...)
		r, o := 1, 0
		if c.retrainedFirst {
			r, o = 0, 1
		}
		if len(rows) != 2 || !has(rows[r].Warnings) || has(rows[o].Warnings) {
			t.Errorf("compare --models %s %q --json: rows %+v, want the warning %q for the retrained model alone", c.models, c.texts, rows, warning)
		}
	}
	page := filepath.Join(dir, "r.html")
	if code, _, stderr := tt(t, "report", "--model", retrained, "--data", data, "--out", page, "--no-audit", "--quiet"); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	// html/template writes the apostrophe as &#39;; the warnings are a list
	// above the evaluation's figures. The training table
	// lists the patterns the retrained model's recipe took out.
	b, err := os.ReadFile(page)
	if err != nil {
		t.Fatal(err)
	}
	if page := string(b); !strings.Contains(page, "<li>"+strings.ReplaceAll(warning, "'", "&#39;")) ||
		!strings.Contains(html.UnescapeString(page), strings.Join(rm.Info.Recipe.MaskTokens, "   ")) {
		t.Errorf("the report does not warn %q, or does not list the patterns %q", warning, rm.Info.Recipe.MaskTokens)
	}
	conf := filepath.Join(dir, "conf.csv")
	if code, _, stderr := tt(t, "audit", "--model", model, "--data", data, "--test", test, "--confirming-out", conf, "--quiet"); code != 0 {
		t.Fatalf("audit --confirming-out: exit %d: %s", code, stderr)
	}
	ev.Warnings = nil
	jsonOf(t, &ev, "eval", "--model", retrained, "--data", data, "--test", conf, "--json", "--quiet")
	if slices.ContainsFunc(ev.Warnings, func(w string) bool { return strings.Contains(w, "choosing half") }) {
		t.Errorf("eval on the confirming half warns %q", ev.Warnings)
	}
	// The mask --masked-out writes was chosen on the same half.
	masked := filepath.Join(dir, "mk-masked.tt")
	if code, _, stderr := tt(t, "audit", "--model", model, "--data", data, "--test", test, "--masked-out", masked, "--quiet"); code != 0 {
		t.Fatalf("audit --masked-out: exit %d: %s", code, stderr)
	}
	ev.Warnings = nil
	jsonOf(t, &ev, "eval", "--model", masked, "--data", data, "--json", "--quiet")
	want := strconv.Itoa(res.SelectionTexts) + " of these 800 texts are the audit's choosing half, which chose the filters and words masked in this model"
	if !slices.ContainsFunc(ev.Warnings, func(w string) bool { return strings.HasPrefix(w, want) }) {
		t.Errorf("eval --json of the masked model: warnings %q, want one starting %q", ev.Warnings, want)
	}
}
