package main

import (
	"context"
	"encoding/json"
	"path/filepath"
	"reflect"
	"testing"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// For a model with the character layer, audit and filters read a text's
// words outside the vocabulary from their characters, as eval and predict
// do (cnn.Model.WithUnseen), not as the unknown word. Checked three ways,
// each against the reading eval makes (cmd_eval.go: WithUnseen over the
// split's texts, then its encoder), and each shown to differ from the
// unknown-word reading, so that the check can fail:
//   - the audit's test texts (audit.NewHeldout) give the logits predict
//     computes for a held-out text holding an unseen word;
//   - filters --json on texts with unseen words gives the profiles of the
//     eval reading;
//   - audit --json gives the audit of the eval reading.
//
// No outside source: the reference is the model's own reading in eval.
func TestAuditAndFiltersReadUnseenWords(t *testing.T) {
	test := filepath.Join("testdata", "demo", "test.csv")
	dir := t.TempDir()
	model, _ := trainCharModel(t, dir, "--test", test)
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := m.Encoder()
	if err != nil {
		t.Fatal(err)
	}
	held, _, err := corpus.Load(test, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	evalModel, evalEnc, err := m.WithUnseen(enc, held.Texts())
	if err != nil || evalModel == m {
		t.Fatalf("no unseen words in %s (%v)", test, err)
	}

	// The audit's reading of one held-out text with an unseen word.
	mu, data, err := audit.NewHeldout(m, held, 1)
	if err != nil {
		t.Fatal(err)
	}
	asUnknown, err := audit.NewData(m, held, 1)
	if err != nil {
		t.Fatal(err)
	}
	i := textWithUnseen(t, enc, held)
	text := held.Examples[i].Text
	pm, pEnc, err := m.WithUnseen(enc, []string{text}) // predict's reading of the one text (predict_stream.go)
	if err != nil {
		t.Fatal(err)
	}
	_, pIDs := pEnc.Encode(text)
	want := pm.Predict(pIDs).Logits
	got, unk := mu.Predict(data.IDs[i]).Logits, m.Predict(asUnknown.IDs[i]).Logits
	if reflect.DeepEqual(want, unk) {
		t.Fatalf("text %d: the unknown-word reading gives predict's logits %v: the check cannot tell the two apart", i, want)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("text %d (%.80q): the audit reads logits %v, predict %v (the unknown word: %v)", i, text, got, want, unk)
	}

	t.Run("filters", func(t *testing.T) {
		code, out, stderr := tt(t, "filters", "--model", model, "--data", test, "--json", "--quiet", "--threads", "1")
		if code != 0 {
			t.Fatalf("filters: exit %d: %s", code, stderr)
		}
		var cmd explain.Profiles
		if err := json.Unmarshal([]byte(out), &cmd); err != nil {
			t.Fatal(err)
		}
		ids, gold := evalIDs(t, evalEnc, evalModel, held)
		wantP := profileFigures(t, evalModel, ids, gold)
		_, unkIDs := encodeAll(enc, held)
		unkP := profileFigures(t, m, unkIDs, gold)
		gotP := figuresOf(&cmd)
		if reflect.DeepEqual(wantP, unkP) {
			t.Fatalf("the unknown-word reading gives the same profiles: the check cannot tell the two apart")
		}
		if !reflect.DeepEqual(gotP, wantP) {
			t.Errorf("filters' profiles:\n%v\nthe eval reading's:\n%v\nthe unknown word's:\n%v", gotP, wantP, unkP)
		}
	})

	t.Run("audit", func(t *testing.T) {
		code, out, stderr := tt(t, "audit", "--model", model, "--data", filepath.Join(dir, "part.csv"), "--json", "--quiet", "--threads", "1")
		if code != 0 {
			t.Fatalf("audit: exit %d: %s", code, stderr)
		}
		var cmd audit.Result
		if err := json.Unmarshal([]byte(out), &cmd); err != nil {
			t.Fatal(err)
		}
		trainDS := loadExamples(t, filepath.Join(dir, "part.csv"))
		trainSplit, _, _ := trainingSplit(m, trainDS, "part.csv")
		tr, err := audit.NewData(m, trainSplit, 1)
		if err != nil {
			t.Fatal(err)
		}
		evalData, err := audit.NewData(evalModel, held, 1)
		if err != nil {
			t.Fatal(err)
		}
		wantA, unkA := auditFigures(t, evalModel, tr, evalData), auditFigures(t, m, tr, asUnknown)
		if reflect.DeepEqual(wantA, unkA) {
			t.Fatalf("the unknown-word reading gives the same audit: the check cannot tell the two apart")
		}
		if gotA := cueFigures(&cmd); !reflect.DeepEqual(gotA, wantA) {
			t.Errorf("audit's cues:\n%v\nthe eval reading's:\n%v\nthe unknown word's:\n%v", gotA, wantA, unkA)
		}
	})
}

// textWithUnseen is the index of the first text of ds with a word enc maps
// to the unknown word.
func textWithUnseen(t *testing.T, enc *corpus.Encoder, ds *corpus.Dataset) int {
	t.Helper()
	for i, e := range ds.Examples {
		toks, ids := enc.Encode(e.Text)
		for k, id := range ids {
			if id == corpus.UNK && toks[k].Text != corpus.UNKWord {
				return i
			}
		}
	}
	t.Fatal("no text with an unseen word")
	return -1
}

func encodeAll(enc *corpus.Encoder, ds *corpus.Dataset) ([]string, [][]int32) {
	return ds.Texts(), enc.EncodeAll(ds.Texts(), 1)
}

// evalIDs encodes ds as eval does with the model WithUnseen returned.
func evalIDs(t *testing.T, enc *corpus.Encoder, m *cnn.Model, ds *corpus.Dataset) ([][]int32, []int) {
	t.Helper()
	d, err := cnn.EncodeDataset(enc, ds, m.Labels, 1)
	if err != nil {
		t.Fatal(err)
	}
	return d.IDs, d.Labels
}

// profileFigures profiles the texts ids with m as filters does by default.
func profileFigures(t *testing.T, m *cnn.Model, ids [][]int32, gold []int) []string {
	t.Helper()
	p, err := explain.ProfileStream(context.Background(), m, explain.SliceSource(ids, gold), explain.ProfileOptions{
		TopK: 10, Negatives: 10, Selective: 0.5, Alpha: 0.05, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	return figuresOf(p)
}

// figuresOf is each filter's firing, strongest activation, selectivity
// counts and top n-grams, as JSON would write them.
func figuresOf(p *explain.Profiles) []string {
	var out []string
	for _, f := range p.Filters {
		b, _ := json.Marshal([]any{f.Filter, f.Fired, f.MaxLogOdds, f.Selectivity.InClass, f.Selectivity.Windows, f.Selectivity.BaseRate, f.TopNgrams})
		out = append(out, string(b))
	}
	return out
}

// auditFigures audits m on tr and held with audit's defaults.
func auditFigures(t *testing.T, m *cnn.Model, tr, held audit.Data) []string {
	t.Helper()
	opt := audit.Options{Top: 15, Seed: cnn.DefaultRecipe().Train.Seed, Workers: 1}
	res, err := audit.Run(context.Background(), m, tr, held, opt, nil)
	if err != nil {
		t.Fatal(err)
	}
	return cueFigures(res)
}

// cueFigures is each listed cue's text and measured reliance, as JSON
// would write them.
func cueFigures(r *audit.Result) []string {
	var out []string
	for _, list := range [][]audit.Candidate{r.Ranked, r.Task} {
		for _, c := range list {
			b, _ := json.Marshal([]any{c.Text, c.Label, c.Reliance, c.Confirmed})
			out = append(out, string(b))
		}
	}
	return out
}
