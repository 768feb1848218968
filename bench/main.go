package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"slices"
	"strconv"
	"strings"
	"time"

	"telltale/cnn"
)

func main() {
	if len(os.Args) < 2 {
		usage()
	}
	var err error
	switch os.Args[1] {
	case "prepare":
		err = cmdPrepare(os.Args[2:])
	case "train":
		err = cmdTrain(os.Args[2:])
	case "tools":
		err = cmdTools(os.Args[2:])
	case "table":
		err = cmdTable(os.Args[2:])
	case "cli":
		err = cmdCLI(os.Args[2:])
	case "explain-input":
		err = cmdExplainInput(os.Args[2:])
	default:
		usage()
	}
	if err != nil {
		fmt.Fprintln(os.Stderr, "bench:", err)
		os.Exit(1)
	}
}

func usage() {
	fmt.Fprintln(os.Stderr, "usage: bench prepare|train|tools|cli|explain-input|table … (see bench/doc.go)")
	os.Exit(2)
}

func cmdPrepare(args []string) error {
	fs := flag.NewFlagSet("prepare", flag.ExitOnError)
	kind := fs.String("corpus", "synth", "synth or spam")
	n := fs.Int("n", 10000, "synth: number of texts")
	root := fs.String("root", "testdata/spamassassin", "spam: the corpus folder")
	out := fs.String("out", "", "output folder")
	seed := fs.Uint64("seed", 1, "synth: seed")
	texts := fs.Bool("texts", false, "also write data.jsonl, the labeled texts, for `telltale train`")
	lines := fs.Bool("lines", false, "also write lines.txt, the texts one per line, for `telltale predict`")
	whole := fs.Bool("whole", false, "spam: every mail (corpus spam-all), not the 80% training split")
	fs.Parse(args)
	if *out == "" {
		return fmt.Errorf("prepare: -out is required")
	}
	var p *prepared
	var err error
	switch *kind {
	case "synth":
		p = synthetic(*n, *seed)
	case "spam":
		p, err = spamPrepared(*root, 0, *whole)
	default:
		return fmt.Errorf("prepare: -corpus %q: use synth or spam", *kind)
	}
	if err != nil {
		return err
	}
	if err := writeIDs(*out, p); err != nil {
		return err
	}
	if *texts {
		if err := writeTexts(*out, p); err != nil {
			return err
		}
	}
	if *lines {
		return writeLines(*out, p)
	}
	return nil
}

// result is one measured run of either implementation; reference.py writes
// the same fields.
type result struct {
	Impl        string    `json:"impl"` // "ours" or "torch"
	Corpus      string    `json:"corpus"`
	Threads     int       `json:"threads"`
	Texts       int       `json:"texts"`
	Tokens      int64     `json:"tokens"`
	Epochs      int       `json:"epochs"`
	EpochSecs   []float64 `json:"epoch_seconds"`
	EpochTexts  []int     `json:"epoch_texts"`
	SteadyEPS   float64   `json:"steady_eps"`     // training examples/s over the epochs after the first
	E2ESeconds  float64   `json:"e2e_seconds"`    // process start to the trained model saved
	InferEPS    float64   `json:"infer_eps"`      // eval-mode examples/s in batches of 100, second pass
	InferCold   float64   `json:"infer_cold_eps"` // the first pass (ours: building the persistent table included)
	InferTexts  int       `json:"infer_texts"`
	PeakRSSMB   float64   `json:"peak_rss_mb"` // VmHWM after training and saving
	Load        string    `json:"loadavg"`     // /proc/loadavg at the end
	DenseGFLOPs float64   `json:"dense_gflops,omitempty"`
	ExecGFLOPs  float64   `json:"exec_gflops,omitempty"`
	Kernel      string    `json:"kernel,omitempty"`
	Loss        float64   `json:"loss"` // training loss of the last epoch
}

func cmdTrain(args []string) error {
	fs := flag.NewFlagSet("train", flag.ExitOnError)
	dir := fs.String("dir", "", "prepared corpus folder")
	epochs := fs.Int("epochs", 3, "epochs")
	threads := fs.Int("threads", runtime.NumCPU(), "threads")
	inferMax := fs.Int("infer-max", 20000, "texts timed for inference")
	out := fs.String("json", "", "append the result to this file (JSON lines)")
	inferOnly := fs.Bool("infer-only", false, "skip training: time inference of DIR/model.tt (saved by an earlier run)")
	inferProf := fs.String("infer-profile", "", "write a CPU profile of the inference phase to this file")
	fs.Parse(args)
	runtime.GOMAXPROCS(*threads)
	p, err := readIDs(*dir)
	if err != nil {
		return err
	}
	cfg := cnn.Config{VocabSize: p.meta.VocabSize, Dim: 128, Widths: []int{3, 4, 5}, Filters: 100,
		Classes: len(p.meta.Labels), Dropout: 0.5}
	m, err := cnn.New(cfg, p.words, p.meta.Labels, 1)
	if err != nil {
		return err
	}
	m.Tokenizer = p.meta.Tokenizer
	if *inferOnly {
		return inferSaved(filepath.Join(*dir, "model.tt"), p.ids[:min(len(p.ids), *inferMax)], *threads, *inferProf)
	}
	data := cnn.Data{IDs: p.ids, Labels: p.labels}
	tc := cnn.TrainConfig{Epochs: *epochs, Seed: 1, Threads: *threads, Patience: -1}
	res, err := cnn.Train(context.Background(), m, data, cnn.Data{}, tc, nil)
	if err != nil {
		return err
	}
	if err := m.Save(filepath.Join(*dir, "model.tt")); err != nil {
		return err
	}
	r := trainingResult(p, cfg, res, *threads, *epochs)

	// Inference in eval mode, batches of 100, the first inferMax texts.
	texts := p.ids[:min(len(p.ids), *inferMax)]
	if *inferProf != "" {
		f, err := os.Create(*inferProf)
		if err != nil {
			return err
		}
		defer f.Close()
		if err := pprof.StartCPUProfile(f); err != nil {
			return err
		}
		defer pprof.StopCPUProfile()
	}
	for pass := range 2 {
		start := time.Now()
		inferBatches(m, texts, *threads)
		eps := float64(len(texts)) / time.Since(start).Seconds()
		if pass == 0 {
			r.InferCold = eps
		} else {
			r.InferEPS = eps
		}
	}
	r.InferTexts = len(texts)
	r.Load = loadavg()
	return emit(*out, r)
}

// inferBatches runs m in eval mode over texts in batches of 100.
func inferBatches(m *cnn.Model, texts [][]int32, threads int) {
	for lo := 0; lo < len(texts); lo += 100 {
		m.Probabilities(texts[lo:min(len(texts), lo+100)], threads)
	}
}

// inferSaved times one inference pass of the model saved at path over
// texts and prints its rate; with profPath it then writes a CPU profile
// of five more passes there.
func inferSaved(path string, texts [][]int32, threads int, profPath string) error {
	m, err := cnn.Load(path)
	if err != nil {
		return err
	}
	start := time.Now()
	inferBatches(m, texts, threads)
	fmt.Printf("{\"infer_eps\": %.1f, \"loadavg\": %q}\n", float64(len(texts))/time.Since(start).Seconds(), loadavg())
	if profPath == "" {
		return nil
	}
	f, err := os.Create(profPath)
	if err != nil {
		return err
	}
	defer f.Close()
	pprof.StartCPUProfile(f)
	defer pprof.StopCPUProfile()
	for range 5 {
		inferBatches(m, texts, threads)
	}
	return nil
}

// trainingResult is the record of our training run res on the prepared
// corpus p with cfg, threads and epochs, before inference is timed.
func trainingResult(p *prepared, cfg cnn.Config, res *cnn.TrainResult, threads, epochs int) result {
	r := result{Impl: "ours", Corpus: p.meta.Corpus, Threads: threads, Texts: len(p.ids), Tokens: p.meta.Tokens,
		Epochs: epochs, SteadyEPS: res.ExamplesPerSec, E2ESeconds: sinceProcessStart(), PeakRSSMB: peakRSSMB(),
		Kernel: cnn.KernelName()}
	for _, e := range res.Epochs {
		r.EpochSecs = append(r.EpochSecs, e.Seconds)
		r.EpochTexts = append(r.EpochTexts, len(p.ids))
		r.Loss = e.Loss
	}
	r.DenseGFLOPs = denseFlopsPerText(p.ids, cfg) * r.SteadyEPS / 1e9
	r.ExecGFLOPs = execFlopsPerText(p.ids, cfg) * r.SteadyEPS / 1e9
	return r
}

// emit prints r and appends it to path when set.
func emit(path string, r any) error {
	b, err := json.Marshal(r)
	if err != nil {
		return err
	}
	fmt.Println(string(b))
	if path == "" {
		return nil
	}
	f, err := os.OpenFile(path, os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o644)
	if err != nil {
		return err
	}
	if _, err := f.Write(append(b, '\n')); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// denseFlopsPerText is the multiply-add work of the recipe done densely, per
// text, on each text's own padded length: the convolution forward (2 FLOPs
// per multiply-add) times 3 for forward plus the two products of the
// backward pass (input and weight gradients), the way dense frameworks
// compute it; the head is negligible.
func denseFlopsPerText(ids [][]int32, cfg cnn.Config) float64 {
	var s float64
	for _, t := range ids {
		lp := max(len(t), cfg.MaxWidth())
		for _, w := range cfg.Widths {
			s += float64(lp-w+1) * float64(cfg.Filters*w*cfg.Dim) * 2
		}
	}
	return 3 * s / float64(len(ids))
}

// execFlopsPerText estimates the floating-point work our training step
// executes per text: the slot table (every distinct word of a batch times
// every filter slot, 2·Dim FLOPs each; distinct words counted on random
// batches of 50), the window sums (one addition per slot and filter of
// every window), and the backward pass through the winning windows (two
// axpys of Dim per slot of every filter). Adam's elementwise work is left
// out.
func execFlopsPerText(ids [][]int32, cfg cnn.Config) float64 {
	rng := rand.New(rand.NewPCG(3, 3))
	order := rng.Perm(len(ids))
	seen := map[int32]bool{}
	var distinct float64
	batches := 0
	for lo := 0; lo < len(order) && batches < 200; lo += 50 {
		clear(seen)
		for _, i := range order[lo:min(len(order), lo+50)] {
			for _, id := range ids[i] {
				if id != 0 {
					seen[id] = true
				}
			}
		}
		distinct += float64(len(seen))
		batches++
	}
	rows := 0
	for _, w := range cfg.Widths {
		rows += w * cfg.Filters
	}
	table := distinct / float64(batches) * float64(rows*cfg.Dim*2) / 50
	var sums float64
	for _, t := range ids {
		lp := max(len(t), cfg.MaxWidth())
		for _, w := range cfg.Widths {
			sums += float64((lp-w+1)*w*cfg.Filters) + float64(w*cfg.Filters*cfg.Dim*4)
		}
	}
	return table + sums/float64(len(ids))
}

// sinceProcessStart is the wall time since this process started (from
// /proc/self/stat, in clock ticks of 1/100 s).
func sinceProcessStart() float64 {
	b, err := os.ReadFile("/proc/self/stat")
	if err != nil {
		return 0
	}
	s := string(b)
	f := strings.Fields(s[strings.LastIndexByte(s, ')')+2:])
	start, _ := strconv.ParseFloat(f[19], 64) // field 22 of the whole line
	u, _ := os.ReadFile("/proc/uptime")
	up, _ := strconv.ParseFloat(strings.Fields(string(u))[0], 64)
	return up - start/100
}

// peakRSSMB is the process's peak resident set (VmHWM) in MiB.
func peakRSSMB() float64 {
	b, _ := os.ReadFile("/proc/self/status")
	for _, line := range strings.Split(string(b), "\n") {
		if v, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			kb, _ := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(v), " kB"), 64)
			return kb / 1024
		}
	}
	return 0
}

func loadavg() string {
	b, _ := os.ReadFile("/proc/loadavg")
	f := strings.Fields(string(b))
	if len(f) < 3 {
		return ""
	}
	return strings.Join(f[:3], " ")
}

// median of xs (0 for none).
func median(xs []float64) float64 {
	if len(xs) == 0 {
		return 0
	}
	s := slices.Clone(xs)
	slices.Sort(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}
