package gui

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/heldout"
	"telltale/internal/wording"
)

// modelState is the open model and what the window knows about it.
type modelState struct {
	Model *cnn.Model
	// Enc is the model's own tokenizer and vocabulary (cnn.Model.Encoder):
	// every text the window encodes for it goes through here.
	Enc   *corpus.Encoder
	Table *explain.SlotTable // word-slot table of the model (read-only)
	Path  string             // file it was opened from or saved to; "" if unsaved
	// Source is the file it was opened from, an input of the window that
	// no save may write onto; "" for a model trained in the window.
	Source string
	// SideFiles are the other files it was made from (an imported model's
	// vocabulary and labels), inputs too.
	SideFiles []string
	// Run is the training record when the model was trained in this
	// window; nil for an opened model.
	Run *cnn.TrainResult
	// BaselineStopped is set when the model was trained in this window
	// with the linear baseline asked for, and Stop ended the run before
	// the baseline was fitted.
	BaselineStopped bool
	// Eval is the model on the open corpus's test split, when a corpus is
	// open and fits the model.
	Eval *evaluation
}

// evaluation is the model's result on the test split.
type evaluation struct {
	Metrics cnn.Metrics
	Gold    []int       // class of each test text
	Pred    []int       // predicted class of each test text
	Probs   [][]float32 // class probabilities of each test text
	Texts   []string    // the test texts, in the same order
	// Baseline is the model beside the linear baseline it carries on the
	// same texts (cnn.CompareBaseline); nil when it carries none. Figures
	// are the accuracy and macro-F1 of both with their intervals.
	Baseline *cnn.Comparison
	Figures  cnn.Figures
	// Warnings say why the texts may not be the held-out texts train
	// reported on (heldOutWarnings), as the command line warns.
	Warnings []string
}

// warned is the warnings on the texts ms was evaluated on, for the status
// bar: " Warning: …" for each; "" when there are none.
func (ms *modelState) warned() string {
	if ms.Eval == nil {
		return ""
	}
	var b strings.Builder
	for _, w := range ms.Eval.Warnings {
		b.WriteString(" Warning: " + w + ".")
	}
	return b.String()
}

// masked lists the model's masked filters, ascending.
func (ms *modelState) masked() []int {
	var gs []int
	for g := range ms.Model.Config.NumFilters() {
		if ms.Model.IsMasked(g) {
			gs = append(gs, g)
		}
	}
	return gs
}

// name is how the views call the model.
func (ms *modelState) name() string {
	if ms.Path != "" {
		return filepath.Base(ms.Path)
	}
	return "the model trained in this window"
}

// caption is the one line every view that uses the model shows above it:
// which model, its filters, and whether some are masked.
func (ms *modelState) caption() string {
	if ms == nil {
		return "No model yet: train one (Training view, Run › Train) or open one (File › Open model)."
	}
	c := ms.Model.Config
	name := "trained in this window"
	if ms.Path != "" {
		name = filepath.Base(ms.Path)
	}
	s := fmt.Sprintf("Model: %s — %d filters (widths %s × %d maps), %d labels.", name, c.NumFilters(),
		intList(c.Widths), c.Filters, len(ms.Model.Labels))
	if m := ms.masked(); len(m) > 0 {
		s += fmt.Sprintf(" A masked model: %s switched off (%s).", wording.Count(len(m), "filter is", "filters are"), shortList(m, 12))
	}
	return s + ms.warned() // kept in view: the status bar moves on
}

// encode is a split as the model sees it, encoded as the command line
// encodes it.
func encode(enc *corpus.Encoder, d *corpus.Dataset, labels []string) (cnn.Data, error) {
	return cnn.EncodeDataset(enc, d, labels, 0)
}

// evaluate runs ms on the test split of cs, as telltale eval does: with
// a character layer, the split's unseen words read with vectors of their
// own (cnn.Model.WithUnseen), not as the unknown word.
func evaluate(ms *modelState, cs *corpusState) (*evaluation, error) {
	if cs == nil {
		return nil, nil
	}
	m, enc, err := ms.Model.WithUnseen(ms.Enc, cs.Test.Texts())
	if err != nil {
		return nil, err
	}
	d, err := encode(enc, cs.Test, m.Labels)
	if err != nil {
		return nil, fmt.Errorf("the test split does not fit this model: %w", err)
	}
	met, pred, err := cnn.Evaluate(m, d, 0)
	if err != nil {
		return nil, err
	}
	var cmp *cnn.Comparison
	if m.Baseline != nil {
		if cmp, err = cnn.CompareBaseline(m, cs.Test, 0); err != nil {
			return nil, fmt.Errorf("the linear baseline on the test split: %w", err)
		}
	}
	return &evaluation{
		Metrics: met, Gold: d.Labels, Pred: pred,
		Probs: m.Probabilities(d.IDs, 0),
		Texts: cs.Test.Texts(), Baseline: cmp, Figures: cnn.FiguresOf(met, cmp),
		Warnings: heldOutWarnings(ms.Model, cs),
	}, nil
}

// newModelState prepares an opened or trained model for the views: its
// tokenizer, vocabulary and word-slot table.
func newModelState(m *cnn.Model, path string) (*modelState, error) {
	enc, err := m.Encoder()
	if err != nil {
		return nil, fmt.Errorf("the model's tokenizer settings cannot be used: %w", err)
	}
	if len(m.Vocab) != m.Config.VocabSize || len(m.Vocab) < 2 {
		return nil, fmt.Errorf("the model has no word list (%d words for %d embedding rows): retrain it with this version", len(m.Vocab), m.Config.VocabSize)
	}
	table, err := explain.NewSlotTable(m, explain.TableOptions{})
	if err != nil {
		return nil, err
	}
	return &modelState{Model: m, Enc: enc, Table: table, Path: path}, nil
}

// setModel makes ms the open model; the profiles and audit of the old one
// are dropped and the new model's filters are profiled.
func (st *State) setModel(ms *modelState) {
	st.cancel(taskProfile)
	st.cancel(taskAudit)
	st.cancel(taskRetrain)
	st.audit.Set(nil)
	st.profiles.Set(nil)
	st.model.Set(ms)
	st.profileNow(nil)
}

// planOf is the split plan model m records (cnn.Model.Info.Splits) when it
// was trained on the data of cs (the same examples: the record's size and
// fingerprint), as the command line finds a model's test split. A model
// trained with a test file records no test share: it fits only a corpus
// opened with a test file, whose own share, unused, is kept.
func planOf(m *cnn.Model, cs *corpusState) (splitPlan, bool) {
	r := m.Info.Splits
	if r == nil || cs == nil || r.Examples != len(cs.All.Examples) || r.Fingerprint != cs.All.Fingerprint() {
		return splitPlan{}, false
	}
	p := splitPlan{DevFrac: r.DevFrac, TestFrac: r.TestFrac, Seed: r.Seed}
	if r.TestFile != "" {
		if cs.TestFile == nil {
			return splitPlan{}, false
		}
		p.TestFrac = cs.Plan.TestFrac
	}
	return p, true
}

// heldOutWarnings are the warnings the command line gives (splits.go) when
// the window evaluates model m on the test file of cs as its own: when
// that file, the test file m was trained with, has changed since training
// (cnn.SplitRecord.TestFingerprint). The window reads no dev file: it
// never uses m's recorded dev file.
//
// It warns too, as the command line does, when the test split holds
// copies of texts of the model's training split (heldout.Copies), and when
// it holds the texts that chose the cues a retrained m was retrained without
// (cnn.Info.CuesChosenOn); when audits with different seeds chose on them,
// no confirming half is clean, and the fix asks for another test file.
func heldOutWarnings(m *cnn.Model, cs *corpusState) []string {
	var out []string
	r := m.Info.Splits
	plan, ok := planOf(m, cs)
	if ok && r.TestFile != "" && r.TestFile == cs.Record.TestFile {
		if w := heldout.Changed("test", r.TestFile, r.TestFingerprint, cs.Record.TestFingerprint,
			"its figures are not the ones train reported; open the original test file, or retrain"); w != "" {
			out = append(out, w)
		}
	}
	if cs == nil || cs.Test == nil {
		return out
	}
	// The open splits are the model's when it was trained on this data
	// with this plan: then copies of training texts in the test split are
	// texts it learned (the command line's warning, splits.go).
	if ok && plan == cs.Plan && cs.Train != nil {
		if n := heldout.Copies(cs.Test, cs.Train); n > 0 {
			out = append(out, fmt.Sprintf("%d of the test split's %s are texts of the training split as well (or copies but for case and punctuation): "+
				"its figures are not all held-out figures; keep one copy of each text in the data (Corpus › Duplicates and leaks lists them)",
				n, wording.Texts(len(cs.Test.Examples))))
		}
	}
	choices := m.Info.CuesChosenIn(len(cs.Test.Examples), cs.Test.Fingerprint())
	fix := "for figures on texts that took no part, compare the models on the confirming half (telltale audit --confirming-out FILE writes it; telltale compare --test FILE)"
	if _, seeds, ok := cnn.ConfirmingSeed(choices); !ok {
		fix = heldout.SeedsJoined(seeds, "for held-out figures, open a test file that no audit chose on")
	}
	for _, c := range choices {
		out = append(out, heldout.CuesChosen(len(c.Texts), len(cs.Test.Examples), c.For == cnn.ChoseMask, fix))
	}
	return out
}

// openModel loads a model file in the background and evaluates it on the
// open corpus's test split; a model trained on the open data is evaluated
// on the test split it records.
func (st *State) openModel(path string, then func()) {
	st.setStatus("Opening model " + path + "…")
	st.loadModel(path, path, func(context.Context) (*cnn.Model, error) { return cnn.Load(path) }, then)
}

// loadModel makes the model load gives the open one, in the background:
// source is the file it comes from (an input no save may write onto) and
// path the model file it is saved as ("" when it has none yet).
func (st *State) loadModel(source, path string, load func(context.Context) (*cnn.Model, error), then func()) {
	cs := itemGet(st.data)
	st.start(taskLoad, true, func(ctx context.Context, report reporter) (func(), error) {
		m, err := load(ctx)
		if err != nil {
			return then, err
		}
		ms, err := newModelState(m, path)
		if err != nil {
			return then, fmt.Errorf("%s: %w", source, err)
		}
		ms.Source = source
		if p, ok := planOf(m, cs); ok && p != cs.Plan && p.check(cs.TestFile != nil) == nil {
			if cs, err = cs.resplit(ctx, p); err != nil {
				return then, err
			}
		}
		ev, err := evaluate(ms, cs)
		if err != nil {
			return then, fmt.Errorf("opened %s, but %w; open the data it was trained for", source, err)
		}
		ms.Eval = ev
		return func() {
			if cs != nil && cs != itemGet(st.data) {
				st.recipe.setPlan(cs.Plan)
				st.data.Set(cs)
			}
			st.setModel(ms)
			saved := ""
			if path == "" {
				saved = " Not saved yet: File › Save model writes it as a telltale model."
			}
			st.setStatus(fmt.Sprintf("Opened model %s: %d filters, labels %s.%s%s", source, ms.Model.Config.NumFilters(),
				strings.Join(ms.Model.Labels, ", "), saved, ms.warned()))
			if then != nil {
				then()
			}
		}, nil
	})
}

// saveModel writes ms to path (atomically, by cnn.Save), and the marks of
// its cues beside it; marks that cannot be written are reported on their
// own, the model being saved.
func (st *State) saveModel(ms *modelState, path string) error {
	if err := ms.Model.Save(path); err != nil {
		return err
	}
	ms.Path = path
	if err := st.auditView.modelSaved(path); err != nil {
		st.showError(err)
	}
	return nil
}
