package torchmodel

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/torchmodel/statedict"
)

// TestErrorsSayTheirKindOnce: an error of the package names the file and
// the fix and wraps its sentinel, whose own words do not end the message
// again.
func TestErrorsSayTheirKindOnce(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "labels.txt")
	notTorch := filepath.Join(dir, "model.pt")
	for _, p := range []string{empty, notTorch} {
		if err := os.WriteFile(p, nil, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	_, labelsErr := ReadLabels(empty)
	_, vocabErr := ReadVocab(empty)
	_, importErr := Import(context.Background(), Options{StateDict: notTorch})
	for _, c := range []struct {
		name     string
		err      error
		sentinel error
		want     string
	}{
		{"labels", labelsErr, ErrVocab, empty + ": no labels: give one label per line"},
		{"vocabulary", vocabErr, ErrVocab, empty + ": no tokens: give one token per line"},
		{"state_dict", importErr, statedict.ErrNotTorch, "the file is empty"},
	} {
		if c.err == nil || !errors.Is(c.err, c.sentinel) {
			t.Errorf("%s: %v does not wrap %v", c.name, c.err, c.sentinel)
			continue
		}
		msg := c.err.Error()
		if !strings.Contains(msg, c.want) || strings.HasSuffix(msg, c.sentinel.Error()) {
			t.Errorf("%s: %q: want %q in it and not ending with %q", c.name, msg, c.want, c.sentinel.Error())
		}
	}
}
