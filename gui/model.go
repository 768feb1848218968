package gui

import (
	"context"
	"fmt"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// modelState is the open model and what the window knows about it.
type modelState struct {
	Model *cnn.Model
	// Enc is the model's own tokenizer and vocabulary (cnn.Model.Encoder):
	// every text the window encodes for it goes through here.
	Enc   *corpus.Encoder
	Table *explain.SlotTable // word-slot table of the model (read-only)
	Path  string             // file it was opened from or saved to; "" if unsaved
	// Run is the training record when the model was trained in this
	// window; nil for an opened model.
	Run *cnn.TrainResult
	// Held-out evaluation (on the open corpus's test split) when a corpus is
	// open and fits the model.
	Eval *evaluation
}

// evaluation is the model's result on the held-out split.
type evaluation struct {
	Metrics cnn.Metrics
	Gold    []int       // class of each held-out text
	Pred    []int       // predicted class of each held-out text
	Probs   [][]float32 // class probabilities of each held-out text
	Texts   []string    // the held-out texts, in the same order
}

// encode is a split as the model sees it, encoded as the command line
// encodes it.
func encode(enc *corpus.Encoder, d *corpus.Dataset, labels []string) (cnn.Data, error) {
	return cnn.EncodeDataset(enc, d, labels, 0)
}

// evaluate runs m on the held-out split of cs.
func evaluate(ms *modelState, cs *corpusState) (*evaluation, error) {
	if cs == nil {
		return nil, nil
	}
	d, err := encode(ms.Enc, cs.Test, ms.Model.Labels)
	if err != nil {
		return nil, fmt.Errorf("the held-out split does not fit this model: %w", err)
	}
	met, pred, err := cnn.Evaluate(ms.Model, d, 0)
	if err != nil {
		return nil, err
	}
	return &evaluation{
		Metrics: met, Gold: d.Labels, Pred: pred,
		Probs: ms.Model.Probabilities(d.IDs, 0),
		Texts: cs.Test.Texts(),
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
	st.audit.Set(nil)
	st.profiles.Set(nil)
	st.model.Set(ms)
	st.profileNow(nil)
}

// openModel loads a model file in the background.
func (st *State) openModel(path string, then func()) {
	_ = st.status.Set("Opening model " + path + "…")
	st.start(taskLoad, true, func(ctx context.Context, report reporter) (func(), error) {
		m, err := cnn.Load(path)
		if err != nil {
			return then, err
		}
		ms, err := newModelState(m, path)
		if err != nil {
			return then, fmt.Errorf("%s: %w", path, err)
		}
		cs := itemGet(st.data)
		ev, err := evaluate(ms, cs)
		if err != nil {
			return then, fmt.Errorf("opened %s, but %w; open the data it was trained for", path, err)
		}
		ms.Eval = ev
		return func() {
			st.setModel(ms)
			_ = st.status.Set(fmt.Sprintf("Opened model %s: %d filters, labels %v.", path, ms.Model.Config.NumFilters(), ms.Model.Labels))
			if then != nil {
				then()
			}
		}, nil
	})
}

// saveModel writes ms to path (atomically, by cnn.Save).
func (st *State) saveModel(ms *modelState, path string) error {
	if err := ms.Model.Save(path); err != nil {
		return err
	}
	ms.Path = path
	return nil
}
