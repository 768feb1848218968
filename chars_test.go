package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
)

// TestTrainWithChars: train --chars records the character layer in the
// model (word vectors --dim + --char-maps wide); predict labels a text
// of misspelled words with their own vectors (the probabilities of the
// library's cnn.Model.WithUnseen path, to float32 rounding as printed);
// explain explains it; export writes it for PyTorch (its agreement with
// PyTorch is checked in package torchmodel).
func TestTrainWithChars(t *testing.T) {
	dir := t.TempDir()
	model, _ := trainCharModel(t, dir)
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	if c := m.Config.Chars; c == nil || c.Filters != 6 || c.Width != 2 || m.Config.Dim != 14 || c.Alphabet == "" {
		t.Fatalf("the model's character layer: %+v, dimension %d", c, m.Config.Dim)
	}
	text := "my tikcet was lsot and the ferrry left wihtout me"
	code, out, stderr := runCmd(t, text+"\n", "predict", "--model", model, "--json")
	if code != 0 {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	var p struct {
		Probabilities map[string]float64 `json:"probabilities"`
	}
	if err := json.Unmarshal([]byte(strings.TrimSpace(out)), &p); err != nil {
		t.Fatal(err)
	}
	mu, enc, err := m.WithUnseen(nil, []string{text})
	if err != nil || mu == m {
		t.Fatalf("no unseen words in %q (%v)", text, err)
	}
	_, ids := enc.Encode(text)
	want := mu.Forward(ids).Probs
	for c, l := range m.Labels {
		if math.Abs(p.Probabilities[l]-float64(want[c])) > 1e-6 {
			t.Errorf("predict: p(%s) = %g, the library's %g", l, p.Probabilities[l], want[c])
		}
	}
	if code, _, stderr := tt(t, "explain", "--model", model, "--text", text, "--json"); code != 0 {
		t.Errorf("explain: exit %d: %s", code, stderr)
	}
	exp := filepath.Join(dir, "exported")
	code, out, stderr = tt(t, "export", "--model", model, "--out", exp)
	if code != 0 || !strings.Contains(out, "character layer exported") {
		t.Errorf("export of a character model: exit %d: %s%s", code, out, stderr)
	}
	if _, err := os.Stat(filepath.Join(exp, "state_dict.npz")); err != nil {
		t.Errorf("export of a character model: %v", err)
	}
}

// trainCharModel trains a small model with the character layer (one epoch
// on 400 demo texts) into dir with train's extra arguments and returns its
// path and train's standard output.
func trainCharModel(t *testing.T, dir string, extra ...string) (model, stdout string) {
	t.Helper()
	model = filepath.Join(dir, "m.tt")
	args := append([]string{"train", "--data", demoPart(t, dir, 400), "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4",
		"--quiet", "--chars", "--char-maps", "6", "--char-width", "2"}, extra...)
	code, stdout, stderr := tt(t, args...)
	if code != 0 {
		t.Fatalf("%q: exit %d: %s", args, code, stderr)
	}
	return model, stdout
}
