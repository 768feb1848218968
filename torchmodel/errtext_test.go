package torchmodel

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
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

// TestPlainKeepsTheCause: plain cuts only the package's own sentinels; an
// innermost error that is the cause (no space left, no such file) stays in
// the message, whose text is then unchanged.
func TestPlainKeepsTheCause(t *testing.T) {
	_, openErr := os.Open(filepath.Join(t.TempDir(), "missing.txt"))
	if openErr == nil {
		t.Fatal("opening a missing file did not fail")
	}
	for _, c := range []struct {
		name string
		err  error
		want string
	}{
		{"no space", fmt.Errorf("torchmodel: %w", &fs.PathError{Op: "open", Path: "/out/weights.npz", Err: syscall.ENOSPC}),
			"torchmodel: open /out/weights.npz: no space left on device"},
		{"not found", fmt.Errorf("torchmodel: vocabulary: %w", openErr),
			"torchmodel: vocabulary: " + openErr.Error()},
		{"sentinel", fmt.Errorf("torchmodel: v.txt: no tokens: give one token per line: %w", ErrVocab),
			"torchmodel: v.txt: no tokens: give one token per line"},
	} {
		got := plain(c.err)
		if got.Error() != c.want {
			t.Errorf("%s: %q, want %q", c.name, got.Error(), c.want)
		}
		if !errors.Is(got, errors.Unwrap(c.err)) {
			t.Errorf("%s: %v no longer wraps its cause", c.name, got)
		}
	}
	if !strings.Contains(plain(fmt.Errorf("x: %w", openErr)).Error(), "no such file or directory") {
		t.Error("an os.Open not-found error lost its cause")
	}
}
