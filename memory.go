package main

import (
	"bufio"
	"fmt"
	"os"
	"strconv"
	"strings"

	"telltale/cnn"
)

// trainingBytes estimates the memory training a model of cfg (VocabSize
// and Classes filled in) takes, in bytes, with batches of batch texts of at
// most maxLen tokens on threads goroutines. It counts the float32 buffers
// that grow with the options (cnn/step.go, slots.go, cache.go), not the
// corpus: every trainable tensor four times (weights, gradient, and Adam's
// two moment estimates), one more copy of the convolution and output
// gradients per extra thread and a copy of the convolution weights
// rearranged by slot, one slot table of Σwidths × maps values per distinct
// word of a batch for training and one for the dev evaluation, the
// embedding rows of a batch's words once plus once per thread, and the
// persistent inference table (at most 2²⁵ values), and with the
// word-weight path its table like a tensor and a batch's rows of it per
// thread; with bigram weights (cfg.WideBigrams) at most pairs bigrams
// (the training split's adjacent pairs, counted with repeats), each with
// its table row as a tensor, its key, two slots of its index and its
// place in a batch's row set. It is an upper bound:
// a batch seldom holds as many distinct words as the estimate allows
// (3.5 times the peak heap measured on the demo corpus, TestTrainingMemoryEstimate),
// so only a model that cannot fit is refused.
func trainingBytes(cfg cnn.Config, batch, maxLen, threads, pairs int) float64 {
	v, d := float64(cfg.VocabSize), float64(cfg.Dim)
	maps, classes := float64(cfg.Filters), float64(cfg.Classes)
	sumW := 0.0
	for _, w := range cfg.Widths {
		sumW += float64(w)
	}
	nf := maps * float64(len(cfg.Widths))
	emb := v * d
	conv := maps*d*sumW + nf
	out := classes*nf + classes
	t := float64(max(threads, 1))
	words := min(v, float64(batch)*float64(maxLen))
	slotRow := sumW*maps + 16    // padded to whole vector lanes
	floats := 4*(emb+conv+out) + // weights, gradients, Adam's moments
		(t-1)*(conv+out) + conv + // per-thread gradients, slot-ordered weights
		2*words*slotRow + // the batch's slot table and the dev evaluation's
		(t+1)*words*d + // the batch's embedding rows
		min(v*slotRow, 1<<25) // the persistent inference table
	if cfg.Wide {
		floats += 4*v*classes + t*words*classes // the word-weight table as a tensor, and its rows of a batch per thread
	}
	if cfg.WideBigrams {
		p := float64(pairs)
		floats += p*(4*classes+2+2+1) + t*min(p, float64(batch)*float64(maxLen))*classes // table, key, index, row set; a batch's rows per thread
	}
	return 4 * floats
}

// machineMemory is the memory this process may use, in bytes: the
// machine's (MemTotal in /proc/meminfo) or, when lower, the control
// group's limit (cgroup v2 memory.max, v1 memory.limit_in_bytes). It is 0
// where neither can be read.
func machineMemory() float64 {
	total := 0.0
	if f, err := os.Open("/proc/meminfo"); err == nil {
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			if rest, ok := strings.CutPrefix(sc.Text(), "MemTotal:"); ok {
				if kb, err := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(rest), " kB"), 64); err == nil {
					total = kb * 1024
				}
			}
		}
		f.Close()
	}
	for _, p := range []string{"/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory/memory.limit_in_bytes"} {
		if b, err := os.ReadFile(p); err == nil {
			if lim, err := strconv.ParseFloat(strings.TrimSpace(string(b)), 64); err == nil && lim > 0 && (total == 0 || lim < total) {
				total = lim
			}
		}
	}
	return total
}

// checkMemory refuses a training run whose estimate exceeds the machine's
// memory, naming the options that set the size. A VocabSize of 2 (the
// reserved words alone) stands for a vocabulary not yet counted.
func checkMemory(cfg cnn.Config, batch, maxLen, threads, pairs int) error {
	need, have := trainingBytes(cfg, batch, maxLen, threads, pairs), machineMemory()
	if have == 0 || need <= have {
		return nil
	}
	vocab := fmt.Sprintf("a vocabulary of %d words", cfg.VocabSize)
	if cfg.VocabSize <= 2 {
		vocab = "before any vocabulary"
	}
	fix := "lower --maps, --dim, --batch, --max-len or --threads, or raise --min-count"
	if cfg.WideBigrams {
		vocab += fmt.Sprintf(", up to %d bigrams", pairs)
		fix += ", or leave out --wide-bigrams"
	}
	return usagef("training this model would take up to about %s of memory (--maps %d × widths %v × --dim %d, %s, "+
		"batches of %d texts of up to %d tokens, %d threads) but this machine has %s: %s",
		gib(need), cfg.Filters, cfg.Widths, cfg.Dim, vocab, batch, maxLen, threads, gib(have), fix)
}

func gib(b float64) string { return fmt.Sprintf("%.1f GiB", b/(1<<30)) }
