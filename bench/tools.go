package main

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"runtime"
	"time"

	"telltale/audit"
	"telltale/cnn"
	"telltale/explain"
)

// toolResult is the timing of the explanation work of the tool alone.
type toolResult struct {
	Impl            string  `json:"impl"` // "tools"
	Threads         int     `json:"threads"`
	ProfileCorpus   string  `json:"profile_corpus"`
	ProfileTexts    int     `json:"profile_texts"`
	ProfileSeconds  float64 `json:"profile_seconds"`
	ExplainTokens   int     `json:"explain_tokens"`
	ExplainMs       float64 `json:"explain_ms"` // median of the runs
	ExplainRuns     int     `json:"explain_runs"`
	AuditTexts      int     `json:"audit_texts"`        // training + held-out texts
	AuditPrepSecond float64 `json:"audit_prep_seconds"` // tokenizing both splits
	AuditSeconds    float64 `json:"audit_seconds"`
	PeakRSSMB       float64 `json:"peak_rss_mb"`
	Load            string  `json:"loadavg"`
}

func cmdTools(args []string) error {
	fs := flag.NewFlagSet("tools", flag.ExitOnError)
	synthDir := fs.String("synth", "", "prepared synthetic corpus with a trained model.tt (filter profiles)")
	spamDir := fs.String("spam", "", "prepared SpamAssassin corpus with a trained model.tt (explain, audit)")
	root := fs.String("root", "testdata/spamassassin", "the SpamAssassin corpus folder")
	threads := fs.Int("threads", runtime.NumCPU(), "threads")
	out := fs.String("json", "", "append the result to this file (JSON lines)")
	fs.Parse(args)
	runtime.GOMAXPROCS(*threads)
	ctx := context.Background()
	r := toolResult{Impl: "tools", Threads: *threads}
	if *synthDir != "" {
		p, err := readIDs(*synthDir)
		if err != nil {
			return err
		}
		m, err := cnn.Load(filepath.Join(*synthDir, "model.tt"))
		if err != nil {
			return err
		}
		start := time.Now()
		if _, err := explain.Profile(ctx, m, p.ids, p.labels, explain.ProfileOptions{Workers: *threads}); err != nil {
			return err
		}
		r.ProfileSeconds = time.Since(start).Seconds()
		r.ProfileCorpus, r.ProfileTexts = p.meta.Corpus, len(p.ids)
	}
	if *spamDir != "" {
		m, err := cnn.Load(filepath.Join(*spamDir, "model.tt"))
		if err != nil {
			return err
		}
		train, held, err := loadSpam(*root)
		if err != nil {
			return err
		}
		// One explanation of a 200-token text: exact shares and every
		// single-token occlusion, the table built over the text's words.
		enc, err := m.Encoder()
		if err != nil {
			return err
		}
		enc.MaxTokens = 0
		found := false
		for _, e := range held.Examples {
			toks, ids := enc.Encode(e.Text)
			if len(ids) < 200 {
				continue
			}
			toks, ids = toks[:200], ids[:200]
			var ms []float64
			for range 21 {
				start := time.Now()
				if _, err := explain.Explain(m, toks, ids, explain.ExplainOptions{Occlusion: true}); err != nil {
					return err
				}
				ms = append(ms, float64(time.Since(start).Nanoseconds())/1e6)
			}
			r.ExplainTokens, r.ExplainMs, r.ExplainRuns = 200, median(ms), len(ms)
			found = true
			break
		}
		if !found {
			return fmt.Errorf("tools: no held-out text of 200 tokens")
		}
		start := time.Now()
		tr, err := audit.NewData(m, train, *threads)
		if err != nil {
			return err
		}
		ho, err := audit.NewData(m, held, *threads)
		if err != nil {
			return err
		}
		cutTokens(&tr, spamMaxLen)
		cutTokens(&ho, spamMaxLen)
		r.AuditPrepSecond = time.Since(start).Seconds()
		start = time.Now()
		if _, err := audit.Run(ctx, m, tr, ho, audit.Options{Seed: 3, Workers: *threads}, nil); err != nil {
			return err
		}
		r.AuditSeconds = time.Since(start).Seconds()
		r.AuditTexts = tr.Len() + ho.Len()
	}
	r.PeakRSSMB = peakRSSMB()
	r.Load = loadavg()
	return emit(*out, r)
}

// cutTokens cuts every text of d to its first n tokens, as training cut
// them: the benchmark's model file records no recipe, so audit.NewData
// does not know the limit.
func cutTokens(d *audit.Data, n int) {
	for i := range d.IDs {
		if len(d.IDs[i]) > n {
			d.IDs[i] = d.IDs[i][:n:n]
			d.Tokens[i] = d.Tokens[i][:n:n]
		}
	}
}
