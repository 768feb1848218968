package audit

import (
	"errors"
	"fmt"
	"runtime"
	"sync"

	"telltale/cnn"
	"telltale/corpus"
)

// ErrInput is matched (errors.Is) by every error about the audit's input:
// a model and data that do not match, a split too small for a test, a bad
// marks file. Its own text is never part of those errors' messages, which
// say their cause once.
var ErrInput = errors.New("audit: bad input")

// ErrOneLabel is matched, beside ErrInput, by the error refusing held-out
// texts of one label (Run): a choice of test texts the command line can
// call a usage error, as it calls other test texts that do not suit.
var ErrOneLabel = errors.New("audit: held-out texts of one label")

// inputError is an error about the audit's input: its message, which says
// the cause and the fix, and a match for ErrInput and for kind, when set.
type inputError struct {
	msg  string
	kind error
}

func (e *inputError) Error() string { return e.msg }
func (e *inputError) Is(target error) bool {
	return target == ErrInput || e.kind != nil && target == e.kind
}

// inputErrorf formats an error about the audit's input (inputError). The
// arguments are formatted as by fmt.Sprintf; %w is not allowed.
func inputErrorf(format string, args ...any) error {
	return &inputError{msg: fmt.Sprintf(format, args...)}
}

// Data is a labeled split as the audit reads it. IDs and Gold are required.
// Texts and Tokens are optional: with them the audit reads positions, lines
// and casing from the original text and quotes it; Tokens[i] are the tokens
// of Texts[i] with byte offsets, one per id of IDs[i] (a text cut to the
// model's length keeps its first tokens). Name names the split's file in
// messages.
type Data struct {
	Name   string
	Texts  []string
	Tokens [][]corpus.Token
	IDs    [][]int32
	Gold   []int
}

// Len is the number of texts.
func (d Data) Len() int { return len(d.IDs) }

// NewData tokenizes the examples of ds with m's tokenizer and vocabulary,
// cuts each text to the length m was trained on (its recipe's MaxLen) and
// maps the labels to m's classes, using workers goroutines (≤ 0:
// GOMAXPROCS). A label m does not know is an error naming the example. The
// model must carry its vocabulary.
func NewData(m *cnn.Model, ds *corpus.Dataset, workers int) (Data, error) {
	if len(m.Vocab) != m.Config.VocabSize {
		return Data{}, inputErrorf("audit: the model holds %d vocabulary words for %d embedding rows: it cannot read text; retrain it with telltale train",
			len(m.Vocab), m.Config.VocabSize)
	}
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		return Data{}, err
	}
	gold, err := ds.LabelIndex(m.Labels)
	if err != nil {
		return Data{}, err // it names the file, the line, the label and the labels known
	}
	maxLen := 0
	if m.Info.Recipe != nil {
		maxLen = m.Info.Recipe.MaxLen
	}
	v := corpus.NewVocab(m.Vocab, nil)
	n := len(ds.Examples)
	out := Data{Name: ds.Path, Texts: make([]string, n), Tokens: make([][]corpus.Token, n), IDs: make([][]int32, n), Gold: gold}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := w; i < n; i += workers {
				text := ds.Examples[i].Text
				toks := tok.TokenizeFor(v, text)
				if maxLen > 0 && len(toks) > maxLen {
					toks = toks[:maxLen:maxLen]
				}
				out.Texts[i], out.Tokens[i], out.IDs[i] = text, toks, v.Encode(toks)
			}
		}()
	}
	wg.Wait()
	return out, nil
}

// name is how messages name the split.
func (d Data) name(what string) string {
	if d.Name != "" {
		return fmt.Sprintf("%s split (%s)", what, d.Name)
	}
	return what + " split"
}

// check validates d against m; what names the split in messages.
func (d Data) check(m *cnn.Model, what string) error {
	cfg := m.Config
	bad := func(format string, args ...any) error {
		return inputErrorf("audit: %s: %s", d.name(what), fmt.Sprintf(format, args...))
	}
	if len(d.Gold) != len(d.IDs) {
		return bad("%d gold labels for %d texts", len(d.Gold), len(d.IDs))
	}
	if d.Texts != nil && len(d.Texts) != len(d.IDs) {
		return bad("%d texts for %d id lists", len(d.Texts), len(d.IDs))
	}
	if d.Tokens != nil && (len(d.Tokens) != len(d.IDs) || d.Texts == nil) {
		return bad("tokens need texts, one token list per text (%d for %d)", len(d.Tokens), len(d.IDs))
	}
	for i, text := range d.IDs {
		if d.Gold[i] < 0 || d.Gold[i] >= cfg.Classes {
			return bad("text %d: class %d, but the model has classes 0 … %d: the data and the model do not match", i, d.Gold[i], cfg.Classes-1)
		}
		if d.Tokens != nil && len(d.Tokens[i]) != len(text) {
			return bad("text %d: %d tokens for %d ids", i, len(d.Tokens[i]), len(text))
		}
		for j, id := range text {
			if id < 0 || int(id) >= cfg.VocabSize {
				return bad("text %d token %d: word %d, but the model knows %d words: the data was encoded for another model", i, j, id, cfg.VocabSize)
			}
		}
	}
	return nil
}

// checkTwoLabels refuses held-out texts of fewer than two labels (an
// error matching ErrInput and ErrOneLabel): the
// shift signal compares each cue's label share in them with training, and
// texts of one label would show a shift for every cue of another label.
// labels are the model's.
func (d Data) checkTwoLabels(labels []string) error {
	if len(d.Gold) == 0 {
		return nil // no texts: refused where the halves are made
	}
	for _, g := range d.Gold {
		if g != d.Gold[0] {
			return nil
		}
	}
	err := inputErrorf("audit: the %s holds one label, %q: the audit compares each cue's label share in the test texts with training, "+
		"and texts of one label would show every cue of another label as shifted; give test texts of at least two of the model's labels "+
		"(a test file of one label suits eval, which measures its recall)", d.name("test"), labels[d.Gold[0]])
	err.(*inputError).kind = ErrOneLabel
	return err
}

// subset returns the texts idx of d (shared, not copied).
func (d Data) subset(idx []int) Data {
	out := Data{Name: d.Name, IDs: make([][]int32, len(idx)), Gold: make([]int, len(idx))}
	if d.Texts != nil {
		out.Texts = make([]string, len(idx))
	}
	if d.Tokens != nil {
		out.Tokens = make([][]corpus.Token, len(idx))
	}
	for k, i := range idx {
		out.IDs[k], out.Gold[k] = d.IDs[i], d.Gold[i]
		if d.Texts != nil {
			out.Texts[k] = d.Texts[i]
		}
		if d.Tokens != nil {
			out.Tokens[k] = d.Tokens[i]
		}
	}
	return out
}

// NewHeldout reads the held-out split as every other reading of the model
// does (eval, predict, explain, the report): for a model with a character
// layer, the words of its texts that are not in the vocabulary get vectors
// of their own from their characters (cnn.Model.WithUnseen), not the
// unknown word's. It returns the model to audit (m itself when m has no
// character layer or the texts no unseen word; else a copy whose
// vocabulary extends m's, sharing its weights, which must not be saved in
// m's place) and the split read for it (NewData). The training split is
// read with NewData(m, …): m's own vocabulary, as the model was trained
// on it, so that every cue is a word m knows; its ids are valid for the
// returned model too. Preconditions are those of NewData.
func NewHeldout(m *cnn.Model, heldout *corpus.Dataset, workers int) (*cnn.Model, Data, error) {
	mu, _, err := m.WithUnseen(nil, heldout.Texts())
	if err != nil {
		return nil, Data{}, fmt.Errorf("audit: %w", err)
	}
	held, err := NewData(mu, heldout, workers)
	if err != nil {
		return nil, Data{}, err
	}
	return mu, held, nil
}
