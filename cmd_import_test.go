package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/torchmodel"
	"telltale/torchmodel/npy"
)

// exportedModel writes a small random telltale model and its export; it
// returns the model file and the export folder.
func exportedModel(t *testing.T) (string, string) {
	t.Helper()
	dir := t.TempDir()
	cfg := cnn.Config{VocabSize: 6, Dim: 4, Widths: []int{2, 3}, Filters: 3, Classes: 2}
	m, err := cnn.New(cfg, []string{"<pad>", "<unk>", "free", "money", "meeting", "today"}, []string{"ham", "spam"}, 9)
	if err != nil {
		t.Fatal(err)
	}
	m.Tokenizer = corpus.TokenizerConfig{Lower: true}
	model := filepath.Join(dir, "model.tt")
	if err := m.Save(model); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "exported")
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out); code != 0 {
		t.Fatalf("export: exit %d\n%s", code, stderr)
	}
	for _, f := range []string{torchmodel.WeightsFile, torchmodel.VocabFile, torchmodel.LabelsFile} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Fatalf("export wrote no %s: %v", f, err)
		}
	}
	return model, out
}

// importArgs is the command line of an import with o's options.
func importArgs(o importOptions) []string {
	args := []string{"import", "--state-dict", o.StateDict, "--vocab", o.Vocab, "--out", o.Out}
	for _, kv := range [][2]string{{"--labels", o.Labels}, {"--labels-file", o.LabelsFile},
		{"--check-texts", o.CheckTexts}, {"--check-logits", o.CheckLogits}} {
		if kv[1] != "" {
			args = append(args, kv[0], kv[1])
		}
	}
	if o.JSON {
		args = append(args, "--json")
	}
	return args
}

// An exported model imported again is a model file every command reads:
// explain runs on it, and its Info records where it came from.
func TestImportCommand(t *testing.T) {
	_, exp := exportedModel(t)
	out := filepath.Join(t.TempDir(), "imported.tt")
	o := importOptions{StateDict: filepath.Join(exp, torchmodel.WeightsFile), Vocab: filepath.Join(exp, torchmodel.VocabFile),
		LabelsFile: filepath.Join(exp, torchmodel.LabelsFile), Out: out, JSON: true}
	code, stdout, stderr := runCmd(t, "", importArgs(o)...)
	if code != 0 {
		t.Fatalf("import: exit %d\n%s", code, stderr)
	}
	var s importSummary
	if err := json.Unmarshal([]byte(stdout), &s); err != nil || s.Vocab != 6 || s.Format != "npz" {
		t.Fatalf("summary %s: %v", stdout, err)
	}
	m, err := cnn.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasSuffix(m.Info.Notes["origin_file"], torchmodel.WeightsFile) || len(m.Info.Notes["origin_sha256"]) != 64 {
		t.Errorf("origin not recorded: %v", m.Info.Notes)
	}
	code, stdoutS, stderrS := runCmd(t, "", "explain", "--model", out, "--text", "Free money today", "--json")
	if code != 0 || !strings.Contains(stdoutS, "spam") {
		t.Errorf("explain on the imported model: exit %d\n%s\n%s", code, stdoutS, stderrS)
	}
}

// Bad input stops import before anything is written, with a message naming
// the file; an output that is an input, directly or through a symbolic
// link, is refused before any work and the input is left as it was.
func TestImportCommandWritesNothingOnBadInput(t *testing.T) {
	_, exp := exportedModel(t)
	dir := t.TempDir()
	vocab := filepath.Join(exp, torchmodel.VocabFile)
	before, _ := os.ReadFile(vocab)
	link := filepath.Join(dir, "link.tt")
	if err := os.Symlink(vocab, link); err != nil {
		t.Fatal(err)
	}
	short := filepath.Join(dir, "short.txt")
	os.WriteFile(short, []byte("<pad>\n<unk>\nfree\n"), 0o644)
	good := importOptions{StateDict: filepath.Join(exp, torchmodel.WeightsFile), Vocab: vocab, Labels: "ham,spam",
		Out: filepath.Join(dir, "out.tt")}
	cases := []struct {
		name string
		edit func(*importOptions)
		code int
		says []string
	}{
		{"vocabulary size", func(o *importOptions) { o.Vocab = short }, 1, []string{"short.txt", "embedding.weight"}},
		{"labels", func(o *importOptions) { o.Labels = "a,b,c" }, 1, []string{"3 labels", "output.weight"}},
		{"out is the vocabulary", func(o *importOptions) { o.Out = vocab }, 2, []string{"--out", "--vocab", "never writes onto its inputs"}},
		{"out links to the vocabulary", func(o *importOptions) { o.Out = link }, 2, []string{"link.tt", "symbolic link to --vocab"}},
		{"missing state_dict", func(o *importOptions) { o.StateDict = filepath.Join(dir, "none.pt") }, 2, []string{"--state-dict", "none.pt", "check the path"}},
	}
	for _, c := range cases {
		o := good
		c.edit(&o)
		code, _, stderr := runCmd(t, "", importArgs(o)...)
		if code != c.code {
			t.Errorf("%s: exit %d, want %d\n%s", c.name, code, c.code, stderr)
			continue
		}
		for _, s := range c.says {
			if !strings.Contains(stderr, s) {
				t.Errorf("%s: %s\ndoes not say %q", c.name, stderr, s)
			}
		}
		if _, err := os.Stat(good.Out); err == nil {
			t.Fatalf("%s: %s was written", c.name, good.Out)
		}
		if after, _ := os.ReadFile(vocab); !bytes.Equal(after, before) {
			t.Fatalf("%s: the vocabulary file changed", c.name)
		}
	}
}

// Export refuses a folder where one of its files is the model itself
// (through a symbolic link), before any work; the model is unchanged.
func TestExportCommandRefusesOverwritingTheModel(t *testing.T) {
	model, _ := exportedModel(t)
	before, _ := os.ReadFile(model)
	out := t.TempDir()
	if err := os.Symlink(model, filepath.Join(out, torchmodel.VocabFile)); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out)
	if code != 2 || !strings.Contains(stderr, "symbolic link to --model") {
		t.Fatalf("exit %d: %s, want a refusal naming --model", code, stderr)
	}
	if after, _ := os.ReadFile(model); !bytes.Equal(after, before) {
		t.Fatal("the model file changed")
	}
	if _, err := os.Stat(filepath.Join(out, torchmodel.WeightsFile)); err == nil {
		t.Error("state_dict.npz was written")
	}
}

// checkedImport is the import of exportedModel's export with three check
// texts written to dir and, in logits, the original model's logits on
// them; writeLogits writes such logits as a .npy file into dir.
func checkedImport(t *testing.T, dir string) (o importOptions, logits []float32, writeLogits func(name string, x []float32) string) {
	t.Helper()
	model, exp := exportedModel(t)
	orig, err := cnn.Load(model)
	if err != nil {
		t.Fatal(err)
	}
	texts := []string{"Free money today", "meeting", "today meeting free free money"}
	os.WriteFile(filepath.Join(dir, "texts.txt"), []byte(strings.Join(texts, "\n")+"\n"), 0o644)
	enc, _ := orig.Encoder()
	for _, s := range texts {
		_, ids := enc.Encode(s)
		logits = append(logits, orig.Forward(ids).Logits...)
	}
	writeLogits = func(name string, x []float32) string {
		var b bytes.Buffer
		npy.WriteNPY(&b, npy.Array{Shape: []int{len(texts), 2}, Data: x})
		p := filepath.Join(dir, name)
		os.WriteFile(p, b.Bytes(), 0o644)
		return p
	}
	o = importOptions{StateDict: filepath.Join(exp, torchmodel.WeightsFile), Vocab: filepath.Join(exp, torchmodel.VocabFile),
		Labels: "ham,spam", PadID: -1, UnkID: -1, Lower: true, CheckTexts: filepath.Join(dir, "texts.txt"),
		CheckLogits: writeLogits("good.npy", logits), Out: filepath.Join(dir, "checked.tt")}
	return o, logits, writeLogits
}

// With --check-texts and --check-logits, import compares its logits with
// the original model's (here the exported model itself, run by telltale)
// and records the agreement; logits that differ stop the import before
// anything is written.
func TestImportCommandCheck(t *testing.T) {
	o, logits, writeLogits := checkedImport(t, t.TempDir())
	dir := filepath.Dir(o.Out)
	if code, _, stderr := runCmd(t, "", importArgs(o)...); code != 0 {
		t.Fatalf("import: exit %d\n%s", code, stderr)
	}
	m, err := cnn.Load(o.Out)
	if err != nil || !strings.Contains(m.Info.Notes["origin_check"], "logits of 3 texts") {
		t.Fatalf("%v: notes %v", err, m.Info.Notes)
	}
	bad := append([]float32(nil), logits...)
	bad[3] += 0.01
	o.CheckLogits, o.Out = writeLogits("bad.npy", bad), filepath.Join(dir, "bad.tt")
	if err := o.check(nil, nil); err != nil {
		t.Fatal(err)
	}
	err = runImport(context.Background(), &runEnv{Stdout: io.Discard, Stderr: io.Discard}, &o)
	if !errors.Is(err, torchmodel.ErrMismatch) || !strings.Contains(err.Error(), "texts.txt line 2") {
		t.Fatalf("%v, want ErrMismatch naming line 2", err)
	}
	if _, err := os.Stat(o.Out); err == nil {
		t.Error("the model was written despite the mismatch")
	}
}

// An imported model (here an export of a telltale model of the demo
// corpus's labels, with random weights) works in every command that reads
// a model and data: predict, eval, filters, report, audit and export.
func TestImportedModelInEveryCommand(t *testing.T) {
	data := smallDemo(t, 200)
	ds, _, err := corpus.Load(data, corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	enc, _ := corpus.TrainEncoder(corpus.TokenizerConfig{Lower: true}, ds.Texts())
	cfg := cnn.Config{VocabSize: enc.Vocab.Len(), Dim: 8, Widths: []int{2, 3}, Filters: 4, Classes: len(ds.Labels)}
	m0, _ := cnn.New(cfg, enc.Vocab.Words, ds.Labels, 3)
	m0.Tokenizer = corpus.TokenizerConfig{Lower: true}
	exp := t.TempDir()
	if err := torchmodel.Export(m0, exp); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "imported.tt")
	o := importOptions{StateDict: filepath.Join(exp, torchmodel.WeightsFile), Vocab: filepath.Join(exp, torchmodel.VocabFile),
		LabelsFile: filepath.Join(exp, torchmodel.LabelsFile), Out: out}
	if code, _, stderr := runCmd(t, "", importArgs(o)...); code != 0 {
		t.Fatalf("import: exit %d\n%s", code, stderr)
	}
	for _, args := range [][]string{
		{"predict", "--model", out, "--text", "free money"},
		{"eval", "--model", out, "--data", data},
		{"filters", "--model", out, "--data", data, "--top", "2"},
		{"report", "--model", out, "--data", data, "--out", filepath.Join(t.TempDir(), "r.html")},
		{"audit", "--model", out, "--data", data},
	} {
		if code, _, stderr := runCmd(t, "", args...); code != 0 {
			t.Errorf("%s on the imported model: exit %d\n%s", args[0], code, stderr)
		}
	}
	if code, _, stderr := runCmd(t, "", "export", "--model", out, "--out", filepath.Join(t.TempDir(), "x")); code != 0 {
		t.Errorf("export of the imported model: exit %d\n%s", code, stderr)
	}
}

// Export makes its folder whole: over an earlier export it leaves the new
// files alone (none of the earlier ones, such as a tokenizer file the new
// model has no use for) and no temporary folder beside it; a folder that
// holds anything else is refused before any work, untouched.
func TestExportReplacesAnEarlierExportWhole(t *testing.T) {
	model, _ := exportedModel(t)
	parent := t.TempDir()
	out := filepath.Join(parent, "exp")
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out); code != 0 {
		t.Fatalf("first export: exit %d: %s", code, stderr)
	}
	stale := filepath.Join(out, torchmodel.TokenizerFile)
	if err := os.WriteFile(stale, []byte("{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out); code != 0 {
		t.Fatalf("export over an earlier one: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(stale); err == nil {
		t.Errorf("the earlier export's %s is still there", torchmodel.TokenizerFile)
	}
	if ents, _ := os.ReadDir(parent); len(ents) != 1 {
		t.Errorf("beside the export: %d entries, want the folder alone", len(ents))
	}
	other := filepath.Join(out, "notes.txt")
	if err := os.WriteFile(other, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out)
	if code != 2 || !strings.Contains(stderr, "holds notes.txt, which no export writes") {
		t.Errorf("a folder with another file: exit %d: %s", code, stderr)
	}
	if b, err := os.ReadFile(other); err != nil || string(b) != "mine" {
		t.Errorf("the other file: %q %v", b, err)
	}
	// A folder given with a trailing slash, or through a link (kept, its
	// target replaced), takes the export; the working folder does not.
	os.Remove(other)
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", out+"/"); code != 0 {
		t.Errorf("--out with a trailing slash: exit %d: %s", code, stderr)
	}
	link := filepath.Join(parent, "link")
	if err := os.Symlink(out, link); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", link); code != 0 {
		t.Errorf("--out through a link: exit %d: %s", code, stderr)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link was replaced: %v %v", fi, err)
	}
	if _, err := os.Stat(filepath.Join(out, torchmodel.WeightsFile)); err != nil {
		t.Errorf("the link's target holds no export: %v", err)
	}
	if code, _, stderr := runCmd(t, "", "export", "--model", model, "--out", "."); code != 2 || !strings.Contains(stderr, "is the working folder") {
		t.Errorf("--out .: exit %d: %s", code, stderr)
	}
}
