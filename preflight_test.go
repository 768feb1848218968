package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
)

// TestUsageErrorsBeforeWork: a mistake that the start of an input shows is
// a usage error (exit 2), found before any work (nothing is trained,
// loaded or written, no progress is printed), and its message names the
// file, the line where there is one, and the fix: a column the file lacks,
// a format its name does not tell, a test file with a header alone, texts
// to label with a header alone, vectors whose dimension --dim contradicts
// and --retrain or --seeds on a model that records no recipe (an imported
// one).
func TestUsageErrorsBeforeWork(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 200)
	model := tinyModel(t)
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	headerOnly := write("header-only.csv", "text,label\n")
	textsHeader := write("texts.csv", "text\n")
	noExt := write("data.txt", "text,label\na,x\nb,y\n")
	vec8 := write("vec.txt", "the 1 2 3 4 5 6 7 8\nferry 1 2 3 4 5 6 7 8\n")
	imported := filepath.Join(dir, "imported.tt")
	m, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	m.Info.Recipe = nil // as torchmodel.Import leaves it
	if err := m.Save(imported); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out.tt")
	train := func(extra ...string) []string {
		return append([]string{"train", "--data", data, "--out", out, "--epochs", "1", "--maps", "2"}, extra...)
	}
	for _, c := range []struct {
		name string
		args []string
		want []string
	}{
		{"text column the file lacks", train("--dim", "4", "--text-col", "body"),
			[]string{data + " line 1", `text column "body" not found`, "pass the right name with --text-col"}},
		{"label column the test file lacks", []string{"eval", "--model", model, "--test", headerOnly, "--label-col", "team"},
			[]string{headerOnly + " line 1", `label column "team" not found`, "--label-col"}},
		{"format not told by the name", train("--dim", "4", "--dev", noExt),
			[]string{noExt, "cannot tell the format from the name", "--format csv"}},
		{"test file with a header alone", []string{"eval", "--model", model, "--test", headerOnly},
			[]string{headerOnly, "no examples found", "at least one record"}},
		{"texts to label with a header alone", []string{"predict", "--model", model, "--data", textsHeader},
			[]string{textsHeader, "no examples found"}},
		{"vectors of another dimension", train("--dim", "4", "--vectors", vec8),
			[]string{"--vectors " + vec8 + " line 1: the file's vectors have 8 numbers each, but --dim is 4: give --dim 8, or leave --dim out"}},
		{"retrain an imported model", []string{"audit", "--model", imported, "--data", data, "--retrain"},
			[]string{"--retrain: " + imported + " records no training recipe (an imported model?)", "train a model with telltale train, or leave out --retrain"}},
		{"seeds of an imported model", []string{"audit", "--model", imported, "--data", data, "--seeds", "2"},
			[]string{"--seeds: " + imported + " records no training recipe"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, stdout, stderr := tt(t, c.args...)
			noCrash(t, c.name, stderr)
			if code != 2 {
				t.Errorf("exit %d, want 2: %s", code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("message lacks %q: %s", w, stderr)
				}
			}
			if before, _, _ := strings.Cut(stderr, "usage:"); strings.Count(strings.TrimSpace(before), "\n") > 0 || stdout != "" {
				t.Errorf("work was done before the refusal: stdout %q, stderr %s", stdout, stderr)
			}
			if _, err := os.Stat(out); err == nil {
				t.Errorf("%s written", out)
			}
		})
	}
}

// TestOutputUnreplaceable: train's --out naming an existing model file
// that is marked immutable (chattr +i) is refused with exit 2 before any
// training, the message naming the mark and the fix, and the old model is
// kept; without the check the rename at the end failed and the trained
// model was lost. Skipped where chattr cannot set the mark.
func TestOutputUnreplaceable(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 200)
	out := filepath.Join(dir, "m.tt")
	if err := os.WriteFile(out, []byte("old model\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if b, err := exec.Command("chattr", "+i", out).CombinedOutput(); err != nil {
		t.Skipf("chattr +i cannot run here (it needs the superuser and a file system with the flag): %v: %s", err, b)
	}
	defer exec.Command("chattr", "-i", out).Run()
	code, stdout, stderr := tt(t, "train", "--data", data, "--out", out, "--epochs", "1", "--dim", "4", "--maps", "2")
	want := "--out " + out + " exists and cannot be replaced: it is marked immutable (chattr +i): clear the mark (chattr -i " + out + "), or choose another --out"
	if code != 2 || !strings.Contains(stderr, want) || stdout != "" || strings.Contains(stderr, "training") {
		t.Errorf("exit %d, stdout %q, stderr %s; want exit 2 before training and %q", code, stdout, stderr, want)
	}
	if b, _ := os.ReadFile(out); string(b) != "old model\n" {
		t.Errorf("the old model now holds %q", b)
	}
}
