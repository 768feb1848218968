package main

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"hash/crc32"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"telltale/cnn"
	"telltale/corpus"
)

// tt runs one command line in-process, without standard input, and returns
// its exit code and output.
func tt(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errb bytes.Buffer
	code = run(context.Background(), args, strings.NewReader(""), &out, &errb)
	return code, out.String(), errb.String()
}

// noCrash fails the test when stderr shows a Go panic or runtime error.
func noCrash(t *testing.T, what, stderr string) {
	t.Helper()
	for _, s := range []string{"panic:", "goroutine ", "runtime error", "[signal "} {
		if strings.Contains(stderr, s) {
			t.Errorf("%s: crashed (%q in stderr):\n%s", what, s, stderr)
		}
	}
}

// demoPart writes the demo training file cut after about n lines (at a
// record boundary) to dir and returns its path.
func demoPart(t *testing.T, dir string, n int) string {
	t.Helper()
	b, err := os.ReadFile("testdata/demo/train.csv")
	if err != nil {
		t.Fatal(err)
	}
	var sb strings.Builder
	for i, l := range strings.SplitAfter(string(b), "\n") {
		if i >= n && strings.HasPrefix(l, "\"") {
			break
		}
		sb.WriteString(l)
	}
	p := filepath.Join(dir, "part.csv")
	if err := os.WriteFile(p, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// tinyModel trains a small model of Kim's kind alone (--wide=false: no word
// weights) on part of the demo corpus and returns the
// path of its file.
func tinyModel(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8",
		"--maps", "4", "--wide=false", "--quiet")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	return model
}

// dataSummary runs `data --json` and decodes the labels and example counts.
func dataSummary(t *testing.T, args ...string) (labels []string, examples int, stderr string) {
	t.Helper()
	code, out, stderr := tt(t, append([]string{"data", "--json"}, args...)...)
	if code != 0 {
		t.Fatalf("data %q: exit %d: %s", args, code, stderr)
	}
	var s corpus.Summary
	if err := json.Unmarshal([]byte(out), &s); err != nil {
		t.Fatalf("data --json: %v\n%s", err, out)
	}
	for _, sp := range s.Splits {
		examples += sp.Examples
	}
	return s.Labels, examples, stderr
}

// TestBadInputMessages feeds each kind of bad input through the command
// line and checks the exit code and that the message names the file, the
// line where there is one, and what to do.
func TestBadInputMessages(t *testing.T) {
	bad := func(name string) string { return filepath.Join("testdata", "bad", name) }
	train := bad("two-labels.csv")
	tiny := []string{"--epochs", "1", "--dim", "4", "--maps", "2", "--force", "--quiet", "--out", filepath.Join(t.TempDir(), "m.tt")}
	cases := []struct {
		name string
		args []string
		code int
		want []string // substrings of stderr, all required
	}{
		{"tab-separated .csv", []string{"data", "--data", bad("tab-in.csv")}, 2,
			[]string{"tab-in.csv line 1", "tab-separated", "name it .tsv or read it as tsv (--format tsv)"}},
		{"semicolon-separated .csv", []string{"data", "--data", bad("semicolon.csv")}, 2,
			[]string{"semicolon.csv line 1", "semicolon-separated", "convert it to comma- or tab-separated"}},
		{"tab-separated .csv read as tsv", []string{"data", "--data", bad("tab-in.csv"), "--format", "tsv"}, 0, nil},
		{"unbalanced quotes", []string{"data", "--data", bad("unbalanced-quote.csv")}, 1,
			[]string{"unbalanced-quote.csv line 2", "malformed quoting", "double any quote"}},
		{"NUL byte", []string{"data", "--data", bad("nul.csv")}, 1,
			[]string{"nul.csv line 3", "NUL byte", "save it as UTF-8"}},
		{"invalid UTF-8 is replaced with a warning", []string{"data", "--data", bad("latin1.csv")}, 0,
			[]string{"warning: corpus: " + bad("latin1.csv") + " line 3: invalid UTF-8 in the text replaced by U+FFFD"}},
		{"empty label", []string{"data", "--data", bad("empty-label.csv")}, 1,
			[]string{"empty-label.csv line 3", "empty label", "give every example a label"}},
		{"one label", []string{"data", "--data", bad("one-label.csv")}, 1,
			[]string{"one-label.csv", `only one label "complaints"`, "at least two labels", "check the label column"}},
		{"folder with one label", []string{"data", "--data", bad("one-label-folder")}, 1,
			[]string{"one-label-folder", `only one label "praise"`, "one sub-folder per label"}},
		{"empty file", []string{"data", "--data", bad("empty.csv")}, 2,
			[]string{"empty.csv", "file is empty", "header row"}},
		{"missing column", []string{"data", "--data", bad("no-text-column.csv")}, 2,
			[]string{"no-text-column.csv line 1", "which column holds the text", `"id" "words" "tag"`, "--text-col"}},
		{"missing named column", []string{"data", "--data", bad("two-labels.csv"), "--label-col", "team"}, 2,
			[]string{"two-labels.csv line 1", `label column "team" not found`, "--label-col"}},
		{"broken JSON line", []string{"data", "--data", bad("broken.jsonl")}, 1,
			[]string{"broken.jsonl line 2", "not a JSON object", "one object per line"}},
		{"unknown extension", []string{"data", "--data", bad("tokenizer.json")}, 2,
			[]string{"tokenizer.json", "cannot tell the format from the name", "(--format csv, tsv, jsonl or dir)"}},
		{"label only in the dev split", []string{"train", "--data", train, "--dev", bad("dev-new-label.csv"), "--out", "unused.tt"}, 1,
			[]string{"dev-new-label.csv line 3", `label "lost-property" is not among the training labels`, "add training examples for it"}},
		{"vectors of the wrong dimension", append([]string{"train", "--data", train, "--vectors", bad("vectors-dim.txt")}, tiny...), 1,
			[]string{"vectors-dim.txt line 3", `3 numbers for "late"`, "dimension is 4"}},
		{"vectors with NaN", append([]string{"train", "--data", train, "--vectors", bad("vectors-nan.txt")}, tiny...), 1,
			[]string{"vectors-nan.txt line 2", `"NaN" is not a finite number`}},
		{"vectors of another dimension than --dim", overriding(append([]string{"train", "--data", train, "--vectors", bad("vectors-4d.txt")}, tiny...), "--dim", "3"), 2,
			[]string{"vectors-4d.txt line 1: the file's vectors have 4 numbers each, but --dim is 3: give --dim 4"}},
		{"tokenizer file that is not JSON", append([]string{"train", "--data", train, "--tokenizer", bad("tokenizer.json")}, tiny...), 1,
			[]string{"tokenizer.json", "not a tokenizer file"}},
		{"empty tokenizer file", append([]string{"train", "--data", train, "--tokenizer", bad("empty.csv")}, tiny...), 2,
			[]string{"--tokenizer " + bad("empty.csv") + " is empty: give a tokenizer file"}},
		{"missing tokenizer file", append([]string{"train", "--data", train, "--tokenizer", bad("none.json")}, tiny...), 2,
			[]string{"--tokenizer " + bad("none.json") + ": no such file: check the path"}},
		{"empty model file", []string{"eval", "--model", bad("empty.csv"), "--data", train}, 1,
			[]string{"empty.csv", "not a telltale model file", "give a file written by telltale train"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := tt(t, c.args...)
			noCrash(t, c.name, stderr)
			if code != c.code {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, c.code, stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr lacks %q:\n%s", w, stderr)
				}
			}
		})
	}
	if ents, _ := os.ReadDir(filepath.Dir(tiny[len(tiny)-1])); len(ents) != 0 {
		t.Errorf("failed runs left %d files in the output folder", len(ents))
	}
	if _, err := os.Stat("unused.tt"); err == nil {
		t.Errorf("a failed train wrote unused.tt")
		os.Remove("unused.tt")
	}
}

// TestBOMAndCRLFWork checks that a UTF-8 byte order mark and Windows line
// ends are read as if they were not there.
func TestBOMAndCRLFWork(t *testing.T) {
	for _, name := range []string{"bom.csv", "crlf.csv"} {
		labels, n, _ := dataSummary(t, "--data", filepath.Join("testdata", "bad", name))
		if fmt.Sprint(labels) != "[complaints praise]" || n != 3 {
			t.Errorf("%s: labels %q, %d examples; want [complaints praise] and 3", name, labels, n)
		}
	}
	// The multi-line record of crlf.csv keeps its inner line break as \n
	// only, and no label carries a trailing \r.
	ds, _, err := corpus.Load(filepath.Join("testdata", "bad", "crlf.csv"), corpus.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got := ds.Examples[1].Text; got != "thanks to the crew\nand the captain" {
		t.Errorf("multi-line CRLF text read as %q", got)
	}
}

// TestLongLines: a 10 MB single line is over the record limit (8 × the
// longest text kept) and is refused with the limit and the option that
// raises it; with --max-text-bytes raised it is kept, cut to that length,
// with a warning. A 5 MB text is within the record limit and is cut to the
// 1 MiB text limit with a warning.
func TestLongLines(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, textBytes int) string {
		p := filepath.Join(dir, name)
		var b bytes.Buffer
		b.WriteString("text,label\nthe ferry was late,complaints\n")
		b.Write(bytes.Repeat([]byte("crew "), textBytes/5))
		b.WriteString(",praise\nlovely crossing,praise\n")
		if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	ten := write("ten.csv", 10<<20)
	code, _, stderr := tt(t, "data", "--data", ten)
	noCrash(t, "10 MB line", stderr)
	limit := fmt.Sprint(8 * corpus.DefaultMaxTextBytes)
	for _, w := range []string{"ten.csv line 3", "record longer than " + limit + " bytes", "--max-text-bytes"} {
		if !strings.Contains(stderr, w) {
			t.Errorf("10 MB line: stderr lacks %q:\n%s", w, stderr)
		}
	}
	if code != 1 {
		t.Errorf("10 MB line: exit %d, want 1", code)
	}
	labels, n, stderr := dataSummary(t, "--data", ten, "--max-text-bytes", fmt.Sprint(2<<20))
	if fmt.Sprint(labels) != "[complaints praise]" || n != 3 || !strings.Contains(stderr, "truncated to 2097152 bytes") {
		t.Errorf("10 MB line with --max-text-bytes 2 MiB: labels %q, %d examples, stderr %q", labels, n, stderr)
	}
	five := write("five.csv", 5<<20)
	labels, n, stderr = dataSummary(t, "--data", five)
	if fmt.Sprint(labels) != "[complaints praise]" || n != 3 ||
		!strings.Contains(stderr, fmt.Sprintf("five.csv line 3: text of %d bytes truncated to %d bytes", 5<<20, corpus.DefaultMaxTextBytes)) {
		t.Errorf("5 MB line: labels %q, %d examples, stderr %q", labels, n, stderr)
	}
}

// modelParts splits a model file into its header JSON and the bytes after
// it (weight count and weights, without the checksum); see cnn/file.go for
// the layout.
func modelParts(t *testing.T, b []byte) (version uint32, header map[string]any, tail []byte) {
	t.Helper()
	version = binary.LittleEndian.Uint32(b[8:])
	hl := binary.LittleEndian.Uint64(b[12:])
	if err := json.Unmarshal(b[20:20+hl], &header); err != nil {
		t.Fatal(err)
	}
	return version, header, b[20+hl : len(b)-4]
}

// buildModelFile assembles a model file with a fresh checksum.
func buildModelFile(t *testing.T, version uint32, header map[string]any, tail []byte) []byte {
	t.Helper()
	js, err := json.Marshal(header)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	b.WriteString("TTLCNN\r\n")
	binary.Write(&b, binary.LittleEndian, version)
	binary.Write(&b, binary.LittleEndian, uint64(len(js)))
	b.Write(js)
	b.Write(tail)
	binary.Write(&b, binary.LittleEndian, crc32.Checksum(b.Bytes(), crc32.MakeTable(crc32.Castagnoli)))
	return b.Bytes()
}

// TestDamagedModelFiles: truncated at every 1 KiB boundary, from a newer
// format version, or with a vocabulary or label list that does not match
// the weights, a model file gives exit 1 and a message naming it.
func TestDamagedModelFiles(t *testing.T) {
	model := tinyModel(t)
	good, err := os.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	data := filepath.Join("testdata", "bad", "two-labels.csv")
	dir := t.TempDir()
	// The rebuilt file must be accepted, or the damaged ones below prove nothing.
	v, h, tail := modelParts(t, good)
	same := filepath.Join(dir, "same.tt")
	os.WriteFile(same, buildModelFile(t, v, h, tail), 0o644)
	if _, err := cnn.Load(same); err != nil {
		t.Fatalf("rebuilt model file: %v", err)
	}

	check := func(name string, b []byte, want ...string) {
		t.Helper()
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		code, _, stderr := tt(t, "eval", "--model", p, "--data", data)
		noCrash(t, name, stderr)
		if code != 1 || !strings.Contains(stderr, "model file "+p+": ") {
			t.Errorf("%s: exit %d, stderr %q; want exit 1 and a message naming the file", name, code, stderr)
		}
		for _, w := range want {
			if !strings.Contains(stderr, w) {
				t.Errorf("%s: stderr lacks %q: %s", name, w, stderr)
			}
		}
	}
	cuts := 0
	for n := 0; n < len(good); n += 1024 {
		hint := "the file is incomplete, save or copy it again"
		if n < 8 {
			hint = "not a telltale model file"
		}
		check(fmt.Sprintf("cut%d.tt", n), good[:n], hint)
		cuts++
	}
	check("cut-last-byte.tt", good[:len(good)-1])
	if cuts < 8 {
		t.Errorf("only %d truncations of a %d-byte model", cuts, len(good))
	}

	newer := append([]byte(nil), good...)
	binary.LittleEndian.PutUint32(newer[8:], cnn.FormatVersion+1)
	check("newer.tt", newer, fmt.Sprintf("format version %d is newer than this program reads (%d): update telltale", cnn.FormatVersion+1, cnn.FormatVersion))

	vocab := h["vocab"].([]any)
	h["vocab"] = vocab[:len(vocab)-1]
	check("short-vocab.tt", buildModelFile(t, v, h, tail), "vocabulary does not match the weights")
	h["vocab"] = vocab

	cfg := h["config"].(map[string]any)
	vs := cfg["vocab_size"]
	if vs == nil {
		t.Fatalf("no vocab_size in the header config %v", cfg)
	}
	cfg["vocab_size"] = vs.(float64) + 1
	h["vocab"] = append(vocab, "extra")
	check("vocab-size.tt", buildModelFile(t, v, h, tail), "do not match the weights")
	cfg["vocab_size"] = vs
	h["vocab"] = vocab

	labels := h["labels"].([]any)
	h["labels"] = labels[:len(labels)-1]
	check("labels.tt", buildModelFile(t, v, h, tail), "the labels do not match the weights")
	h["labels"] = labels

	flipped := append([]byte(nil), good...)
	flipped[len(flipped)-100] ^= 0x10
	check("flipped.tt", flipped, "checksum mismatch")
}

// TestAtomicWriteFailures: an output path that cannot be written is
// refused as a usage error (exit 2) with a message naming it and the fix,
// never a temporary file, before any training, and leaves no partial or
// temporary file.
func TestAtomicWriteFailures(t *testing.T) {
	model := tinyModel(t)
	data := filepath.Join("testdata", "bad", "two-labels.csv")
	dir := t.TempDir()
	isDir := filepath.Join(dir, "folder")
	os.Mkdir(isDir, 0o755)
	os.WriteFile(filepath.Join(isDir, "keep.txt"), []byte("x"), 0o644)
	emptyDir := filepath.Join(dir, "empty-folder")
	os.Mkdir(emptyDir, 0o755)
	regular := filepath.Join(dir, "file")
	os.WriteFile(regular, []byte("x"), 0o644)
	outs := []struct{ name, out, want string }{
		{"a folder", isDir, "is a folder: give a file name"},
		{"an empty folder", emptyDir, "is a folder: give a file name"},
		{"in a missing folder", filepath.Join(dir, "no", "such", "m.tt"), "the folder " + filepath.Join(dir, "no", "such") + " does not exist: create it or choose another --out"},
		{"under a regular file", filepath.Join(regular, "m.tt"), regular + " is a file, not a folder: choose another --out"},
	}
	if os.Geteuid() != 0 {
		ro := filepath.Join(dir, "ro")
		os.Mkdir(ro, 0o555)
		outs = append(outs, struct{ name, out, want string }{"in a read-only folder", filepath.Join(ro, "m.tt"), "(permission denied): make the folder writable or choose another --out"})
	} else {
		t.Log("running as root: the read-only folder case is not checked (root may write there)")
	}
	before := listTree(t, dir)
	for _, o := range outs {
		for _, args := range [][]string{
			{"train", "--data", data, "--epochs", "1", "--dim", "4", "--maps", "2", "--out", o.out},
			{"mask", "--model", model, "--filters", "0", "--out", o.out},
		} {
			code, _, stderr := tt(t, args...)
			noCrash(t, o.name, stderr)
			if code != 2 || !strings.Contains(stderr, o.out) || !strings.Contains(stderr, o.want) || strings.Contains(stderr, ".check") {
				t.Errorf("%s --out %s: exit %d, stderr %q; want exit 2 naming the path and %q", args[0], o.name, code, stderr, o.want)
			}
			if args[0] == "train" && strings.Contains(stderr, "training on") {
				t.Errorf("train --out %s: trained before finding that the output cannot be written", o.name)
			}
		}
	}
	if after := listTree(t, dir); fmt.Sprint(after) != fmt.Sprint(before) {
		t.Errorf("failed writes changed the folder:\nbefore %q\nafter  %q", before, after)
	}

	// A successful write leaves the model and nothing else.
	out := filepath.Join(dir, "ok", "masked.tt")
	os.Mkdir(filepath.Dir(out), 0o755)
	if code, _, stderr := tt(t, "mask", "--model", model, "--filters", "0", "--out", out); code != 0 {
		t.Fatalf("mask: exit %d: %s", code, stderr)
	}
	if got := listTree(t, filepath.Dir(out)); fmt.Sprint(got) != "[masked.tt]" {
		t.Errorf("mask left %q in its output folder, want only masked.tt", got)
	}
}

// listTree lists every path under root, relative to it, sorted.
func listTree(t *testing.T, root string) []string {
	t.Helper()
	var out []string
	err := filepath.Walk(root, func(p string, info os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		if rel, _ := filepath.Rel(root, p); rel != "." {
			out = append(out, rel)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(out)
	return out
}

// TestDataNamesAreNeverPaths: labels such as "../x" and label folders with
// odd names are data, not paths (a folder name cannot hold a "/", and
// hidden ones, like "..x", are skipped by the folder reader): training on them writes the model file
// and nothing else, anywhere in the sandbox, and a symbolic link in a label
// folder is not followed.
func TestDataNamesAreNeverPaths(t *testing.T) {
	sandbox := t.TempDir()
	work := filepath.Join(sandbox, "a", "b", "work")
	os.MkdirAll(work, 0o755)
	csvPath := filepath.Join(work, "evil.csv")
	var b strings.Builder
	b.WriteString("text,label\n")
	for i := 0; i < 6; i++ {
		fmt.Fprintf(&b, "the ferry was late %d,../x\nthanks to the crew %d,../../evil\nlost my bag %d,/tmp/abs\n", i, i, i)
	}
	os.WriteFile(csvPath, []byte(b.String()), 0o644)

	folder := filepath.Join(work, "folder")
	secret := filepath.Join(sandbox, "secret.txt")
	os.WriteFile(secret, []byte("outsideword outsideword"), 0o644)
	for _, label := range []string{"x..", "a b", "~x"} {
		d := filepath.Join(folder, label)
		os.MkdirAll(d, 0o755)
		for i := 0; i < 3; i++ {
			os.WriteFile(filepath.Join(d, fmt.Sprintf("%d.txt", i)), []byte(fmt.Sprintf("the crossing %s %d", label, i)), 0o644)
		}
	}
	if err := os.Symlink(secret, filepath.Join(folder, "x..", "link.txt")); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(filepath.Join(sandbox, "a"), filepath.Join(folder, "linked-label")); err != nil {
		t.Fatal(err)
	}
	before := listTree(t, sandbox)

	out := filepath.Join(work, "out")
	os.Mkdir(out, 0o755)
	for _, c := range []struct {
		data   string
		labels string
	}{
		{csvPath, "[../../evil ../x /tmp/abs]"},
		{folder, "[a b x.. ~x]"},
	} {
		model := filepath.Join(out, "m.tt")
		code, _, stderr := tt(t, "train", "--data", c.data, "--out", model, "--epochs", "1", "--dim", "4", "--maps", "2", "--force", "--quiet")
		if code != 0 {
			t.Fatalf("train on %s: exit %d: %s", c.data, code, stderr)
		}
		m, err := cnn.Load(model)
		if err != nil {
			t.Fatal(err)
		}
		if got := fmt.Sprint(m.Labels); got != c.labels {
			t.Errorf("%s: labels %s, want %s", c.data, got, c.labels)
		}
		for _, w := range m.Vocab {
			if w == "outsideword" {
				t.Errorf("%s: the file behind a symbolic link was read", c.data)
			}
		}
		if code, _, stderr := tt(t, "mask", "--model", model, "--filters", "1", "--out", filepath.Join(out, "masked.tt")); code != 0 {
			t.Fatalf("mask: exit %d: %s", code, stderr)
		}
		after := listTree(t, sandbox)
		want := append(append([]string(nil), before...), "a/b/work/out", "a/b/work/out/m.tt", "a/b/work/out/masked.tt")
		sort.Strings(want)
		if fmt.Sprint(after) != fmt.Sprint(want) {
			t.Errorf("%s: files after training\n%q\nwant\n%q", c.data, after, want)
		}
		os.Remove(model)
		os.Remove(filepath.Join(out, "masked.tt"))
	}
}

// TestDataMemoryOnMillionLines streams a generated file of one million
// labeled lines through `telltale data` and samples the heap while it
// runs. `data` loads the whole corpus (corpus.Load) to find duplicates and
// leaks, so the bound is a multiple of the file size, not a constant: this
// measures how many bytes of heap each byte of input costs.
func TestDataMemoryOnMillionLines(t *testing.T) {
	if testing.Short() {
		t.Skip("generates and reads a 1M-line file; skipped with -short")
	}
	const lines = 1_000_000
	p := filepath.Join(t.TempDir(), "big.csv")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	words := strings.Fields("ferry late crew ramp ticket refund bag cabin deck harbour crossing timetable storm cafe seat")
	labels := []string{"bookings", "complaints", "lost-property", "praise"}
	var b bytes.Buffer
	b.WriteString("text,label\n")
	x := uint32(1)
	for i := 0; i < lines; i++ {
		n := 6 + i%10
		for j := 0; j < n; j++ {
			x = x*1664525 + 1013904223 // LCG of Numerical Recipes, for varied texts
			b.WriteString(words[x>>28%uint32(len(words))])
			b.WriteByte(' ')
		}
		fmt.Fprintf(&b, "%d,%s\n", i, labels[i%len(labels)])
		if b.Len() > 1<<20 {
			f.Write(b.Bytes())
			b.Reset()
		}
	}
	f.Write(b.Bytes())
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	st, _ := os.Stat(p)

	// Two measures, sampled every 20 ms: the heap in use (HeapAlloc, which
	// includes garbage not yet collected and is what the process holds) and
	// the live heap found by the last collection.
	live := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	runtime.GC()
	var base runtime.MemStats
	runtime.ReadMemStats(&base)
	metrics.Read(live)
	baseLive := live[0].Value.Uint64()
	var peak, peakLive uint64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		var ms runtime.MemStats
		tick := time.NewTicker(20 * time.Millisecond)
		defer tick.Stop()
		for {
			select {
			case <-stop:
				return
			case <-tick.C:
				runtime.ReadMemStats(&ms)
				metrics.Read(live)
				peak = max(peak, ms.HeapAlloc)
				peakLive = max(peakLive, live[0].Value.Uint64())
			}
		}
	}()
	code, out, stderr := tt(t, "data", "--data", p, "--json")
	close(stop)
	wg.Wait()
	if code != 0 {
		t.Fatalf("data: exit %d: %s", code, stderr)
	}
	var s corpus.Summary
	if err := json.Unmarshal([]byte(out), &s); err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, sp := range s.Splits {
		n += sp.Examples
	}
	if n != lines {
		t.Errorf("data counted %d examples in its splits, want %d", n, lines)
	}
	grown := int64(peak) - int64(base.HeapAlloc)
	grownLive := int64(peakLive) - int64(baseLive)
	t.Logf("1M lines, %d MB file: peak heap in use %d MB, peak live heap %d MB above the start (%.1f and %.1f bytes per input byte)",
		st.Size()>>20, grown>>20, grownLive>>20, float64(grown)/float64(st.Size()), float64(grownLive)/float64(st.Size()))
	// Measured at 6.1 bytes of heap in use and 4.1 live per input byte (the
	// texts, the example records before and after the split, the duplicate
	// tables and the collector's headroom); 8 leaves room for the
	// collector's timing and fails on a regression that copies the corpus
	// once more.
	if grown > 8*st.Size() {
		t.Errorf("peak heap %d MB for a %d MB file: more than 8 bytes per input byte", grown>>20, st.Size()>>20)
	}
	if grownLive > 6*st.Size() {
		t.Errorf("peak live heap %d MB for a %d MB file: more than 6 bytes per input byte", grownLive>>20, st.Size()>>20)
	}
}

// TestLineLimits: a word-vector line over 1 MiB and a standard-input line
// of predict over 16 MiB are refused with the limit in the message.
func TestLineLimits(t *testing.T) {
	dir := t.TempDir()
	vec := filepath.Join(dir, "long-vectors.txt")
	os.WriteFile(vec, []byte("ferry"+strings.Repeat(" 0.5", 300_000)+"\n"), 0o644)
	code, _, stderr := tt(t, "train", "--data", filepath.Join("testdata", "bad", "two-labels.csv"), "--vectors", vec,
		"--epochs", "1", "--dim", "4", "--maps", "2", "--force", "--out", filepath.Join(dir, "m.tt"))
	noCrash(t, "long vector line", stderr)
	if code != 1 || !strings.Contains(stderr, "long-vectors.txt line 1: line longer than 1048576 bytes") {
		t.Errorf("vector line over 1 MiB: exit %d, stderr %q", code, stderr)
	}

	model := tinyModel(t)
	var out, errb bytes.Buffer
	in := strings.Repeat("ferry ", (16<<20)/6+10) + "\nlate ferry\n"
	code = run(context.Background(), []string{"predict", "--model", model}, strings.NewReader(in), &out, &errb)
	noCrash(t, "long stdin line", errb.String())
	if code != 1 || !strings.Contains(errb.String(), "standard input line 1 is longer than 16 MiB") || !strings.Contains(errb.String(), "cut the lines shorter") {
		t.Errorf("stdin line over 16 MiB: exit %d, stderr %q", code, errb.String())
	}
	// The lines before it are labeled and written, one output line each.
	out.Reset()
	errb.Reset()
	code = run(context.Background(), []string{"predict", "--model", model}, strings.NewReader("late ferry\n\n"+in), &out, &errb)
	if code != 1 || !strings.Contains(errb.String(), "standard input line 3 is longer than 16 MiB") || strings.Count(out.String(), "\n") != 2 {
		t.Errorf("two lines, then one over 16 MiB: exit %d, stdout %q, stderr %q; want the two lines' output", code, out.String(), errb.String())
	}
}
