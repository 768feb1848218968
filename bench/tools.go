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
	"telltale/corpus"
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
		if err := r.timeProfiles(ctx, *synthDir); err != nil {
			return err
		}
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
		if err := r.timeExplain(m, held); err != nil {
			return err
		}
		if err := r.timeAudit(ctx, m, train, held); err != nil {
			return err
		}
	}
	r.PeakRSSMB = peakRSSMB()
	r.Load = loadavg()
	return emit(*out, r)
}

// timeProfiles times the filter profiles of the model saved in the
// prepared corpus folder dir over the folder's texts, on r.Threads workers.
func (r *toolResult) timeProfiles(ctx context.Context, dir string) error {
	p, err := readIDs(dir)
	if err != nil {
		return err
	}
	m, err := cnn.Load(filepath.Join(dir, "model.tt"))
	if err != nil {
		return err
	}
	start := time.Now()
	if _, err := explain.Profile(ctx, m, p.ids, p.labels, explain.ProfileOptions{Workers: r.Threads}); err != nil {
		return err
	}
	r.ProfileSeconds = time.Since(start).Seconds()
	r.ProfileCorpus, r.ProfileTexts = p.meta.Corpus, len(p.ids)
	return nil
}

// timeExplain times, 21 times, one explanation of m of the first
// 200 tokens of the first held-out text that has as many: exact shares
// and every single-token occlusion, the table built over the text's words.
func (r *toolResult) timeExplain(m *cnn.Model, held *corpus.Dataset) error {
	enc, err := m.Encoder()
	if err != nil {
		return err
	}
	enc.MaxTokens = 0
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
		return nil
	}
	return fmt.Errorf("tools: no held-out text of 200 tokens")
}

// timeAudit times the tokenizing of both splits for m (cut to spamMaxLen
// tokens, as training cut them) and the cue audit over them, on r.Threads
// workers.
func (r *toolResult) timeAudit(ctx context.Context, m *cnn.Model, train, held *corpus.Dataset) error {
	start := time.Now()
	tr, err := audit.NewData(m, train, r.Threads)
	if err != nil {
		return err
	}
	ho, err := audit.NewData(m, held, r.Threads)
	if err != nil {
		return err
	}
	cutTokens(&tr, spamMaxLen)
	cutTokens(&ho, spamMaxLen)
	r.AuditPrepSecond = time.Since(start).Seconds()
	start = time.Now()
	if _, err := audit.Run(ctx, m, tr, ho, audit.Options{Seed: 3, Workers: r.Threads}, nil); err != nil {
		return err
	}
	r.AuditSeconds = time.Since(start).Seconds()
	r.AuditTexts = tr.Len() + ho.Len()
	return nil
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
