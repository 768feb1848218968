package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/internal/outguard"
)

// guardCommand is one command's outputs and inputs, for the output guard's
// table test: every input option with the file it names, every output
// option, and the other arguments the command needs.
type guardCommand struct {
	name    string
	outputs []string
	inputs  []string
	extra   []string
}

var guardCommands = []guardCommand{
	{"train", []string{"--out"}, []string{"--data", "--dev", "--test", "--vectors", "--tokenizer", "--mask-tokens"}, []string{"--epochs", "1", "--maps", "2", "--dim", "4"}},
	{"eval", []string{"--export"}, []string{"--model", "--data", "--test"}, nil},
	{"predict", []string{"--export"}, []string{"--model", "--data"}, nil},
	{"explain", []string{"--export"}, []string{"--model", "--data"}, nil},
	{"filters", []string{"--export"}, []string{"--model", "--data"}, nil},
	{"audit", []string{"--export", "--masked-out", "--retrain-out", "--confirming-out"}, []string{"--model", "--data", "--test", "--models", "--vectors", "--marks"}, []string{"--retrain"}},
	{"mask", []string{"--out"}, []string{"--model", "--data", "--test"}, []string{"--filters", "0"}},
	{"report", []string{"--out"}, []string{"--model", "--data", "--test"}, nil},
	{"import", []string{"--out"}, []string{"--state-dict", "--vocab", "--labels-file", "--tokenizer", "--check-texts", "--check-logits"}, nil},
	{"export", []string{"--out"}, []string{"--model"}, nil},
}

// guardInputs are the contents of the input files, by option.
func guardInputs(t *testing.T) map[string][]byte {
	t.Helper()
	data, err := os.ReadFile(demoPart(t, t.TempDir(), 300))
	if err != nil {
		t.Fatal(err)
	}
	model, err := os.ReadFile(tinyModel(t))
	if err != nil {
		t.Fatal(err)
	}
	two, err := os.ReadFile(filepath.Join("testdata", "bad", "two-labels.csv"))
	if err != nil {
		t.Fatal(err)
	}
	tok, err := os.ReadFile(filepath.Join("testdata", "bad", "tokenizer.json"))
	if err != nil {
		t.Fatal(err)
	}
	return map[string][]byte{"--data": data, "--dev": two, "--test": two, "--model": model,
		"--vectors": []byte("ferry 0.1 0.2 0.3 0.4\n"), "--tokenizer": tok, "--mask-tokens": []byte("/TKREF-[0-9]{5}/\n"),
		// audit's: another model, and a marks file.
		"--models": model, "--marks": []byte("artifact\ttkref - <number>\n"),
		// import's inputs: the guard refuses before any of them is read.
		"--state-dict": []byte("PK not a real state_dict"), "--vocab": []byte("<pad>\n<unk>\nferry\n"),
		"--labels-file": []byte("a\nb\n"), "--check-texts": []byte("ferry\n"), "--check-logits": []byte("not read")}
}

// aliases are the ways an output can name an input file p in dir: the
// same path, a path through "..", a symbolic link and a hard link (the
// last two named with ext, so that an --export format check passes).
var aliases = []struct {
	name string
	make func(t *testing.T, dir, p, ext string) string
}{
	{"same path", func(t *testing.T, dir, p, ext string) string { return p }},
	{"./.. path", func(t *testing.T, dir, p, ext string) string {
		os.Mkdir(filepath.Join(dir, "sub"), 0o755)
		wd, err := os.Getwd()
		if err != nil {
			t.Fatal(err)
		}
		rel, err := filepath.Rel(wd, dir)
		if err != nil {
			t.Fatal(err)
		}
		return "./" + rel + "/sub/../" + filepath.Base(p)
	}},
	{"symbolic link", func(t *testing.T, dir, p, ext string) string {
		l := filepath.Join(dir, "link"+ext)
		if err := os.Symlink(p, l); err != nil {
			t.Fatal(err)
		}
		return l
	}},
	{"hard link", func(t *testing.T, dir, p, ext string) string {
		l := filepath.Join(dir, "hard"+ext)
		if err := os.Link(p, l); err != nil {
			t.Fatal(err)
		}
		return l
	}},
}

// TestOutputNeverOverwritesInput: for every command, every file it writes
// and every file it reads, an output that is the input (the same path, a
// path through "..", a symbolic link to it or a hard link of it) is refused
// with exit 2 before any work, the message naming both options, and the
// input's bytes are unchanged (SHA-256 before and after). The dev and test
// files a model recorded at training are inputs too, read when --test is
// absent (and the dev file by audit's --retrain): an output onto one of
// them is refused the same way, whether the model is --model or one of
// audit's --models, and the file is unchanged byte for byte.
func TestOutputNeverOverwritesInput(t *testing.T) {
	contents := guardInputs(t)
	for _, gc := range guardCommands {
		for _, out := range gc.outputs {
			for _, in := range gc.inputs {
				for _, al := range aliases {
					name := fmt.Sprintf("%s %s onto %s by %s", gc.name, out, in, al.name)
					t.Run(name, func(t *testing.T) { checkGuard(t, gc, out, in, al.make, contents) })
				}
			}
		}
	}
	rs := recordedSplitsModel(t)
	for _, rc := range recordedCases {
		for _, which := range []string{"dev", "test"} {
			for _, al := range aliases {
				name := fmt.Sprintf("%s %s %s onto the model's recorded %s file by %s", rc.name, strings.Join(rc.extra, " "), rc.out, which, al.name)
				t.Run(name, func(t *testing.T) { checkRecordedGuard(t, rs, rc, which, al.make) })
			}
		}
	}
	t.Run("eval --export inside the model's recorded test folder", checkRecordedFolderGuard)
}

// checkRecordedFolderGuard: an output inside the test folder (one
// sub-folder per label) a model was trained with is refused before any
// work, and the folder holds the same files after.
func checkRecordedFolderGuard(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	folder := filepath.Join(dir, "test")
	for i, l := range []string{"bookings", "complaints", "bookings", "complaints"} {
		os.MkdirAll(filepath.Join(folder, l), 0o755)
		text := fmt.Sprintf("text %d about the ferry %s", i, l)
		if err := os.WriteFile(filepath.Join(folder, l, fmt.Sprintf("%d.txt", i)), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--test", folder, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	listing := func() []string {
		var names []string
		filepath.WalkDir(folder, func(p string, _ os.DirEntry, _ error) error { names = append(names, p); return nil })
		return names
	}
	before := listing()
	out := filepath.Join(folder, "complaints", "scores.csv")
	code, _, stderr := tt(t, "eval", "--model", model, "--data", data, "--export", out)
	noCrash(t, "guard", stderr)
	if code != 2 || !strings.Contains(stderr, "telltale never writes onto its inputs") || !strings.Contains(stderr, "'s recorded test split folder") {
		t.Errorf("eval --export %s: exit %d, stderr %q; want exit 2 naming the model's recorded test split", out, code, stderr)
	}
	if after := listing(); !slices.Equal(after, before) {
		t.Errorf("the test folder changed: %q, was %q", after, before)
	}
}

// recordedCases are the commands that take a model and write a file, each
// with the output option checked against the model's recorded dev and test
// files and the arguments it needs besides --model and --data; byModels
// names the model with audit's --models instead, beside a model that
// records no files.
var recordedCases = []struct {
	name, out string
	extra     []string
	byModels  bool
}{
	{"eval", "--export", nil, false},
	{"predict", "--export", nil, false},
	{"explain", "--export", nil, false},
	{"filters", "--export", nil, false},
	{"report", "--out", nil, false},
	{"mask", "--out", []string{"--filters", "0"}, false},
	{"audit", "--export", nil, false},
	{"audit", "--confirming-out", nil, false},
	{"audit", "--confirming-out", []string{"--retrain"}, false},
	{"audit", "--export", []string{"--retrain"}, false},
	{"audit", "--export", nil, true},
}

// splitsModel is a model trained with a dev and a test file of their
// own, which its file records (cnn.SplitRecord), and the files' contents.
type splitsModel struct {
	dir, model, other, data string
	contents                map[string][]byte // by "dev" and "test"
}

// recordedSplitsModel trains a small model on part of the demo corpus with
// halves of the demo test file as its dev and test files, in a folder of
// its own.
func recordedSplitsModel(t *testing.T) splitsModel {
	t.Helper()
	dir := t.TempDir()
	rs := splitsModel{dir: dir, data: demoPart(t, dir, 400), model: filepath.Join(dir, "m2.tt"), other: tinyModel(t),
		contents: map[string][]byte{}}
	f, err := os.Open(filepath.Join("testdata", "demo", "test.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil || len(rows) < 3 {
		t.Fatalf("the demo test file: %d rows (%v)", len(rows), err)
	}
	half := 1 + (len(rows)-1)/2
	for which, part := range map[string][][]string{"dev": rows[1:half], "test": rows[half:]} {
		var buf bytes.Buffer
		w := csv.NewWriter(&buf)
		w.WriteAll(append([][]string{rows[0]}, part...))
		rs.contents[which] = buf.Bytes()
	}
	for _, which := range []string{"dev", "test"} {
		if err := os.WriteFile(filepath.Join(dir, which+".csv"), rs.contents[which], 0o644); err != nil {
			t.Fatal(err)
		}
	}
	code, _, stderr := tt(t, "train", "--data", rs.data, "--dev", filepath.Join(dir, "dev.csv"), "--test", filepath.Join(dir, "test.csv"),
		"--out", rs.model, "--epochs", "1", "--dim", "8", "--maps", "4", "--wide=false", "--quiet")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return rs
}

// checkRecordedGuard runs the case rc with its output onto the model's
// recorded dev or test file (which), named by alias, and checks the refusal
// and that the file is unchanged; a file that changed is put back, so that
// the other cases start from it.
func checkRecordedGuard(t *testing.T, rs splitsModel, rc struct {
	name, out string
	extra     []string
	byModels  bool
}, which string, alias func(*testing.T, string, string, string) string) {
	target := filepath.Join(rs.dir, which+".csv")
	t.Cleanup(func() {
		os.Remove(filepath.Join(rs.dir, "link.csv"))
		os.Remove(filepath.Join(rs.dir, "hard.csv"))
		os.WriteFile(target, rs.contents[which], 0o644)
	})
	args := []string{rc.name, "--model", rs.model, "--data", rs.data}
	if rc.byModels {
		args = []string{rc.name, "--model", rs.other, "--models", rs.model, "--data", rs.data}
	}
	args = append(append(args, rc.extra...), rc.out, alias(t, rs.dir, target, ".csv"))
	code, _, stderr := tt(t, args...)
	noCrash(t, "guard", stderr)
	want := "'s recorded " + which + " split "
	if code != 2 || !strings.Contains(stderr, "telltale never writes onto its inputs") ||
		!strings.Contains(stderr, rc.out+" ") || !strings.Contains(stderr, want) {
		t.Errorf("%q: exit %d, stderr %q; want exit 2 naming %s and %s…", args, code, stderr, rc.out, want)
	}
	if after, err := os.ReadFile(target); err != nil || !bytes.Equal(after, rs.contents[which]) {
		t.Errorf("the model's recorded %s file %s changed (%v)", which, target, err)
	}
}

func checkGuard(t *testing.T, gc guardCommand, out, in string, alias func(*testing.T, string, string, string) string, contents map[string][]byte) {
	dir := t.TempDir()
	// An --export or --confirming-out must end in .csv, so the inputs are
	// named that way too: the guard, not the extension check, must be what
	// refuses.
	ext := ".in"
	if out == "--export" || out == "--confirming-out" {
		ext = ".csv"
	}
	args, paths := guardArgs(t, gc, dir, ext, contents)
	target := paths[in]
	before := sha256.Sum256(contents[in])
	args = append(append(args, gc.extra...), out, alias(t, dir, target, ext))
	code, _, stderr := tt(t, args...)
	noCrash(t, "guard", stderr)
	if code != 2 || !strings.Contains(stderr, "telltale never writes onto its inputs") ||
		!strings.Contains(stderr, out+" ") || !strings.Contains(stderr, in+" ") {
		t.Errorf("%q: exit %d, stderr %q; want exit 2 naming %s and %s", args, code, stderr, out, in)
	}
	after, err := os.ReadFile(target)
	if err != nil || sha256.Sum256(after) != before {
		t.Errorf("the input %s changed (%v)", in, err)
	}
}

// guardArgs writes gc's input files into dir, named after their options
// with extension ext, and returns the command line that names them and the
// path of each.
func guardArgs(t *testing.T, gc guardCommand, dir, ext string, contents map[string][]byte) (args []string, paths map[string]string) {
	args, paths = []string{gc.name}, map[string]string{}
	for _, opt := range gc.inputs {
		p := filepath.Join(dir, strings.TrimPrefix(opt, "--")+ext)
		if opt == "--data" && ext != ".csv" {
			p += ".csv" // read by its extension
		}
		if err := os.WriteFile(p, contents[opt], 0o644); err != nil {
			t.Fatal(err)
		}
		args = append(args, opt, p)
		paths[opt] = p
	}
	return args, paths
}

// TestOutputNotWritable: for every command and every file it writes, an
// output that is a folder, that lies in a missing folder or under a file is
// refused with exit 2 before any work, the message naming the path the user
// gave and what to do, never a temporary file. (export's --out is a folder
// by design: there the case is an --out inside a missing folder. An
// --export or --confirming-out ends in .csv, so that the guard, not the
// extension check, is what refuses.)
func TestOutputNotWritable(t *testing.T) {
	contents := guardInputs(t)
	for _, gc := range guardCommands {
		for _, out := range gc.outputs {
			ext := map[bool]string{true: ".csv", false: ".in"}[out == "--export" || out == "--confirming-out"]
			cases := []struct {
				name string
				path func(dir string) string
				want func(dir string) string
			}{
				{"a folder", func(dir string) string { return filepath.Join(dir, "folder"+ext) },
					func(dir string) string {
						return out + " " + filepath.Join(dir, "folder"+ext) + " is a folder: give a file name"
					}},
				{"in a missing folder", func(dir string) string { return filepath.Join(dir, "nodir", "x"+ext) },
					func(dir string) string {
						return "the folder " + filepath.Join(dir, "nodir") + " does not exist: create it or choose another " + out
					}},
				{"under a file", func(dir string) string { return filepath.Join(dir, "afile", "x"+ext) },
					func(dir string) string {
						return filepath.Join(dir, "afile") + " is a file, not a folder: choose another " + out
					}},
			}
			for _, c := range cases {
				if gc.name == "export" && c.name == "a folder" {
					continue
				}
				t.Run(gc.name+" "+out+" "+c.name, func(t *testing.T) {
					dir := t.TempDir()
					os.WriteFile(filepath.Join(dir, "afile"), []byte("keep me\n"), 0o644)
					os.Mkdir(filepath.Join(dir, "folder"+ext), 0o755)
					args, _ := guardArgs(t, gc, dir, ext, contents)
					args = append(append(args, gc.extra...), out, c.path(dir))
					code, _, stderr := tt(t, args...)
					noCrash(t, "guard", stderr)
					if code != 2 || !strings.Contains(stderr, c.want(dir)) || strings.Contains(stderr, ".check") {
						t.Errorf("%q: exit %d, stderr %q; want exit 2 and %q", args, code, stderr, c.want(dir))
					}
				})
			}
		}
	}
}

// TestMarksAreInputs: the marks file beside an input model holds a person's
// verdicts, so no output may land on it, and no output but the audit's
// marks option may be a .marks file; the verdicts are unchanged after.
func TestMarksAreInputs(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	data := demoPart(t, dir, 300)
	marks := filepath.Join(filepath.Dir(model), "m.marks")
	verdicts := []byte("artifact\ttkref - <number>\n")
	if err := os.WriteFile(marks, verdicts, 0o644); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "link.csv")
	os.Symlink(marks, link)
	other := filepath.Join(dir, "other.marks")
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"mask", "--model", model, "--filters", "0", "--out", marks}, "--out " + marks + ": a .marks file holds a person's marks"},
		{[]string{"train", "--data", data, "--out", other}, "--out " + other + ": a .marks file"},
		{[]string{"train", "--data", data, "--out", strings.TrimSuffix(other, ".marks") + ".MARKS"}, "a .marks file"},
		{[]string{"eval", "--model", model, "--test", data, "--export", link}, "is a symbolic link to the marks file of --model " + marks},
		{[]string{"predict", "--model", model, "--data", data, "--export", link}, "the marks file of --model"},
		{[]string{"filters", "--model", model, "--data", data, "--export", link}, "the marks file of --model"},
		{[]string{"audit", "--model", model, "--data", data, "--export", link}, "the marks file"},
		{[]string{"audit", "--model", model, "--data", data, "--marks", other, "--mark-task", "ferry", "--export", link}, "the marks file of --model"},
		{[]string{"report", "--model", model, "--data", data, "--out", link}, "marks file"},
	}
	for _, c := range cases {
		code, _, stderr := tt(t, c.args...)
		noCrash(t, "marks", stderr)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 and %q", c.args, code, stderr, c.want)
		}
	}
	if b, _ := os.ReadFile(marks); string(b) != string(verdicts) {
		t.Errorf("the marks file changed: %q", b)
	}
	if _, err := os.Stat(other); err == nil {
		t.Error("an output was written as a .marks file")
	}
	// The audit's own marks option still writes the file beside the model.
	code, _, stderr := tt(t, "audit", "--model", model, "--mark-task", "ferry", "--quiet")
	if b, _ := os.ReadFile(marks); code != 0 || !strings.Contains(string(b), "task\tferry") {
		t.Errorf("audit --mark-task: exit %d (%s); the marks file holds %q", code, stderr, b)
	}
}

// TestOutputGuardFoldersAndSidecars: an output inside an input folder, an
// audit export whose side table would land on an input, an audit's marks
// file (written when a cue is marked) on an input or another output, and two
// outputs naming one file are refused the same way.
func TestOutputGuardFoldersAndSidecars(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	folder := filepath.Join(dir, "corpus")
	for _, l := range []string{"ham", "spam"} {
		os.MkdirAll(filepath.Join(folder, l), 0o755)
		for i := 0; i < 3; i++ {
			os.WriteFile(filepath.Join(folder, l, fmt.Sprintf("%d.txt", i)), []byte(l+" text"), 0o644)
		}
	}
	data := demoPart(t, dir, 300)
	stability := filepath.Join(dir, "sus.stability.csv") // what --export sus.csv writes beside it with --seeds
	os.WriteFile(stability, []byte("keep me\n"), 0o644)
	marks := filepath.Join(filepath.Dir(model), "m.marks") // the marks file beside the model, written when a cue is marked
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"train", "--data", folder, "--out", filepath.Join(folder, "ham", "4.txt")}, "is inside the --data folder"},
		{[]string{"eval", "--model", model, "--test", folder, "--export", filepath.Join(folder, "x.csv")}, "is inside the --test folder"},
		{[]string{"audit", "--model", model, "--data", data, "--test", stability, "--seeds", "2", "--export", filepath.Join(dir, "sus.csv")}, "--export's stability table " + stability + " is --test"},
		{[]string{"audit", "--model", model, "--data", data, "--export", filepath.Join(dir, "a.csv"), "--masked-out", filepath.Join(dir, "x", "..", "a.csv")}, "are one file"},
		{[]string{"audit", "--model", model, "--data", data, "--mark-task", "ferry", "--masked-out", marks}, "--masked-out " + marks + ": a .marks file holds a person's marks"},
		{[]string{"audit", "--model", model, "--data", data, "--mark-task", "ferry", "--marks", data}, "the marks file (--marks) " + data + " is --data"},
	}
	for _, c := range cases {
		code, _, stderr := tt(t, c.args...)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 and %q", c.args, code, stderr, c.want)
		}
	}
	if b, _ := os.ReadFile(stability); string(b) != "keep me\n" {
		t.Errorf("the input beside the export changed: %q", b)
	}
	if _, err := os.Stat(filepath.Join(folder, "ham", "4.txt")); err == nil {
		t.Error("train wrote into its data folder")
	}
}

// TestInputsCheckedFirst: for every command and every file it reads, an
// input that does not exist, or a folder where only a file will do, is
// refused with exit 2 before any work, the message naming the option, the
// path and the fix (the data options read a folder of sub-folders too).
func TestInputsCheckedFirst(t *testing.T) {
	contents := guardInputs(t)
	for _, gc := range guardCommands {
		for _, in := range gc.inputs {
			for _, c := range []struct{ name, file, want string }{
				{"missing", "missing.in", ": no such file"},
				{"a folder", "folder", " is a folder: give a file in it, not the folder"},
			} {
				if c.name == "a folder" && slices.Contains(corpusOptions, in) {
					continue
				}
				t.Run(gc.name+" "+in+" "+c.name, func(t *testing.T) {
					dir := t.TempDir()
					os.Mkdir(filepath.Join(dir, "folder"), 0o755)
					args, paths := guardArgs(t, gc, dir, ".in", contents)
					bad := filepath.Join(dir, c.file)
					args[slices.Index(args, paths[in])] = bad
					for _, out := range gc.outputs {
						args = append(args, out, filepath.Join(dir, "out-"+strings.TrimPrefix(out, "--")+".csv"))
					}
					code, stdout, stderr := tt(t, append(args, gc.extra...)...)
					noCrash(t, "input check", stderr)
					want := bad + c.want
					if code != 2 || !strings.Contains(stderr, in) || !strings.Contains(stderr, want) || stdout != "" {
						t.Errorf("%q: exit %d, stdout %q, stderr %q; want exit 2, nothing on stdout and %q", args, code, stdout, stderr, want)
					}
				})
			}
		}
	}
}

// recordedSplits lists a model's recorded dev and test files as inputs to
// protect, but not one recorded as read once (a pipe, /dev/fd/N): its path
// names another file, or nothing, in a later process.
func TestRecordedSplitsLeaveReadOnceFiles(t *testing.T) {
	m, err := cnn.New(cnn.Config{VocabSize: 4, Dim: 2, Widths: []int{1}, Filters: 1, Classes: 2}, nil, []string{"a", "b"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	m.Info.Splits = &cnn.SplitRecord{Data: "d.csv", DevFile: "/data/dev.csv", TestFile: "/dev/fd/63", TestPipe: true}
	path := filepath.Join(t.TempDir(), "m.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	got := recordedSplits([]outguard.File{{Name: "--model", Path: path}})
	if len(got) != 1 || got[0].Path != "/data/dev.csv" {
		t.Errorf("recorded splits %+v, want the dev file alone", got)
	}
}

// A command given the model's texts by --test alone, or other --data,
// reads the data file the model records to find its training split
// (findTestSplitOf), so an output onto that file is refused before any
// work, and the file is unchanged after.
func TestRecordedDataGuarded(t *testing.T) {
	rs := recordedSplitsModel(t)
	before, err := os.ReadFile(rs.data)
	if err != nil {
		t.Fatal(err)
	}
	test := filepath.Join(rs.dir, "test.csv")
	for _, c := range [][]string{
		{"eval", "--model", rs.model, "--test", test, "--export", rs.data},
		{"eval", "--model", rs.model, "--data", test, "--export", rs.data},
		{"report", "--model", rs.model, "--data", test, "--out", rs.data},
		{"mask", "--model", rs.model, "--test", test, "--filters", "0", "--out", rs.data},
		{"audit", "--model", rs.model, "--data", test, "--export", rs.data},
		{"audit", "--model", rs.model, "--data", test, "--confirming-out", rs.data},
	} {
		code, _, stderr := tt(t, c...)
		noCrash(t, "guard", stderr)
		if code != 2 || !strings.Contains(stderr, "telltale never writes onto its inputs") || !strings.Contains(stderr, "'s recorded training data") {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 naming the model's recorded training data", c, code, stderr)
		}
		if after, err := os.ReadFile(rs.data); err != nil || !bytes.Equal(after, before) {
			t.Fatalf("%q changed the model's training data (%v)", c, err)
		}
	}
}
