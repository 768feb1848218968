package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// The command-line benchmarks run run() in-process, as a user runs each
// command, on the SpamAssassin corpus (subject and body, ham/spam): files
// in, output through a writer that counts lines. They time the command
// paths whole (reading, tokenizing, model load, the work, writing); the
// side-by-side figures against the reference are `make bench`'s.
//
//	go test -run '^$' -bench CommandLine -benchtime 1x -args -cli.profile /tmp/prof
//
// With -cli.profile each sub-benchmark writes a CPU profile of its timed
// runs alone (the set-up's training left out) and the allocation profiles
// before and after them (read the difference with
// `go tool pprof -sample_index=alloc_space -base NAME.allocs-before.pprof NAME.allocs.pprof`).
// With -cli.args any command line is timed instead (paths relative to the
// module root), e.g. the synthetic corpora that bench/run.sh prepares.
var (
	cliProfile = flag.String("cli.profile", "", "folder for CPU and allocation profiles of each command benchmark's timed runs")
	cliArgs    = flag.String("cli.args", "", "time this command line instead (words separated by spaces), e.g. \"filters --model m.tt --data d.jsonl --json\"")
	cliStdin   = flag.String("cli.stdin", "", "with -cli.args: the file given as standard input")
	cliEpochs  = flag.Int("cli.epochs", 1, "epochs of the train benchmark and of the set-up's model")
)

// spamLabels maps the corpus's folders to the two labels.
var spamLabels = map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"}

// cliFixture is what the command benchmarks read: the corpus as labeled
// JSON lines and as one text per line, a trained model, and texts of 200
// tokens for explain.
type cliFixture struct {
	data, lines, model, explain200 string
	texts, explainTexts            int
	linesBytes                     int64
}

func newCLIFixture(b *testing.B) *cliFixture {
	root := testref.Corpus(b, "spamassassin", "spam-1")
	dir := b.TempDir()
	ds, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		b.Fatal(err)
	}
	ds = ds.Relabel(spamLabels).MapTexts(corpus.SubjectAndBody)
	f := &cliFixture{data: filepath.Join(dir, "data.jsonl"), lines: filepath.Join(dir, "lines.txt"),
		model: filepath.Join(dir, "model.tt"), explain200: filepath.Join(dir, "explain200.txt"), texts: len(ds.Examples)}
	var data, lines bytes.Buffer
	enc := json.NewEncoder(&data)
	for _, e := range ds.Examples {
		if err := enc.Encode(map[string]string{"text": e.Text, "label": e.Label}); err != nil {
			b.Fatal(err)
		}
		lines.WriteString(oneLineText(e.Text))
		lines.WriteByte('\n')
	}
	f.linesBytes = int64(lines.Len())
	writeFile(b, f.data, data.Bytes())
	writeFile(b, f.lines, lines.Bytes())
	if code, stderr := runQuiet("train", "--data", f.data, "--out", f.model, "--epochs", fmt.Sprint(*cliEpochs),
		"--patience", "0", "--seed", "1", "--quiet"); code != 0 {
		b.Fatalf("set-up training: %s", stderr)
	}
	m, err := cnn.Load(f.model)
	if err != nil {
		b.Fatal(err)
	}
	tokEnc, err := m.Encoder()
	if err != nil {
		b.Fatal(err)
	}
	var ex bytes.Buffer
	for _, t := range ds.Texts() {
		toks := tokEnc.Tok.TokenizeFor(tokEnc.Vocab, t)
		if len(toks) < 200 {
			continue
		}
		ex.WriteString(oneLineText(t[:toks[199].End]))
		ex.WriteByte('\n')
		if f.explainTexts++; f.explainTexts == 100 {
			break
		}
	}
	writeFile(b, f.explain200, ex.Bytes())
	return f
}

func writeFile(b *testing.B, path string, data []byte) {
	if err := os.WriteFile(path, data, 0o644); err != nil {
		b.Fatal(err)
	}
}

// oneLineText turns line breaks into spaces (the tokenizer splits at both).
func oneLineText(s string) string { return strings.NewReplacer("\r", " ", "\n", " ").Replace(s) }

// runQuiet runs one command line (for the set-up) and returns its exit
// code and standard error.
func runQuiet(args ...string) (int, string) {
	var errb bytes.Buffer
	code := run(context.Background(), args, strings.NewReader(""), io.Discard, &errb)
	return code, errb.String()
}

// BenchmarkCommandLine times each command as a user runs it. Metrics per
// run: texts/s where the command reads texts, and allocations per text.
func BenchmarkCommandLine(b *testing.B) {
	if *cliArgs != "" {
		b.Run("args", func(b *testing.B) { benchCommand(b, "args", *cliStdin, 0, -1, strings.Fields(*cliArgs)...) })
		return
	}
	f := newCLIFixture(b)
	b.Run("predict-json", func(b *testing.B) {
		b.SetBytes(f.linesBytes)
		benchCommand(b, "predict-json", f.lines, f.texts, f.texts, "predict", "--model", f.model, "--json")
	})
	b.Run("train", func(b *testing.B) {
		out := filepath.Join(b.TempDir(), "m.tt")
		benchCommand(b, "train", "", f.texts, -1, "train", "--data", f.data, "--out", out, "--epochs", fmt.Sprint(*cliEpochs),
			"--patience", "0", "--seed", "1", "--quiet", "--json")
	})
	b.Run("filters", func(b *testing.B) {
		benchCommand(b, "filters", "", f.texts, -1, "filters", "--model", f.model, "--data", f.data, "--json", "--quiet")
	})
	b.Run("explain-200", func(b *testing.B) {
		benchCommand(b, "explain-200", f.explain200, f.explainTexts, -1, "explain", "--model", f.model, "--color", "never")
	})
	b.Run("audit", func(b *testing.B) {
		benchCommand(b, "audit", "", f.texts, -1, "audit", "--model", f.model, "--data", f.data, "--json", "--quiet")
	})
}

// benchCommand times run(args) with stdin from the file stdinPath (none
// when empty). texts, when positive, gives the texts/s and allocs/text
// metrics; wantLines, when not negative, is the number of output lines
// every run must print.
func benchCommand(b *testing.B, name, stdinPath string, texts, wantLines int, args ...string) {
	b.ReportAllocs()
	stop := startProfiles(b, name)
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	runs := 0
	for b.Loop() {
		var in io.Reader = strings.NewReader("")
		var file *os.File
		if stdinPath != "" {
			var err error
			if file, err = os.Open(stdinPath); err != nil {
				b.Fatal(err)
			}
			in = file
		}
		out := &outCounter{}
		var errb bytes.Buffer
		code := run(context.Background(), args, in, out, &errb)
		if file != nil {
			file.Close()
		}
		if code != 0 {
			b.Fatalf("%s: exit code %d: %s", strings.Join(args, " "), code, errb.String())
		}
		if wantLines >= 0 && out.lines != wantLines {
			b.Fatalf("%s printed %d lines, want %d", args[0], out.lines, wantLines)
		}
		runs++
	}
	runtime.ReadMemStats(&after)
	stop()
	if texts > 0 && runs > 0 {
		b.ReportMetric(float64(texts)*float64(runs)/b.Elapsed().Seconds(), "texts/s")
		b.ReportMetric(float64(after.Mallocs-before.Mallocs)/float64(texts*runs), "allocs/text")
	}
}

// outCounter counts the lines written to it and drops them.
type outCounter struct{ lines int }

func (c *outCounter) Write(p []byte) (int, error) {
	c.lines += bytes.Count(p, []byte{'\n'})
	return len(p), nil
}

// startProfiles starts the CPU profile of one benchmark's timed runs and
// writes the allocation profile as it stands before them, when
// -cli.profile is set; the function returned stops the CPU profile and
// writes the allocation profile after them.
func startProfiles(b *testing.B, name string) func() {
	if *cliProfile == "" {
		return func() {}
	}
	if err := os.MkdirAll(*cliProfile, 0o755); err != nil {
		b.Fatal(err)
	}
	writeAllocs := func(file string) {
		runtime.GC() // the profile then holds every allocation made so far
		f, err := os.Create(filepath.Join(*cliProfile, file))
		if err != nil {
			b.Fatal(err)
		}
		defer f.Close()
		if err := pprof.Lookup("allocs").WriteTo(f, 0); err != nil {
			b.Fatal(err)
		}
	}
	writeAllocs(name + ".allocs-before.pprof")
	cpu, err := os.Create(filepath.Join(*cliProfile, name+".cpu.pprof"))
	if err != nil {
		b.Fatal(err)
	}
	if err := pprof.StartCPUProfile(cpu); err != nil {
		cpu.Close()
		b.Fatalf("%v (leave out go test's -cpuprofile: -cli.profile writes one per command)", err)
	}
	return func() {
		pprof.StopCPUProfile()
		if err := cpu.Close(); err != nil {
			b.Fatal(err)
		}
		writeAllocs(name + ".allocs.pprof")
	}
}
