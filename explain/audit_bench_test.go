package explain

import (
	"context"
	"testing"

	"telltale/corpus"
)

// BenchmarkAuditSpamAssassin times the whole audit (association,
// profiles, evidence, held-out interventions, counterfactuals) of a model
// with the default architecture (128 dimensions, widths 3, 4, 5 × 100
// filters), trained for one epoch, on the SpamAssassin corpus: whole
// e-mails cut to 256 tokens, 80/20 split. Training is not timed.
func BenchmarkAuditSpamAssassin(b *testing.B) {
	root := corpusRoot(b, "spamassassin", "easy-ham-1")
	d, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true, MaxTextBytes: 4096})
	if err != nil {
		b.Fatal(err)
	}
	bin := d.Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
	train, held := bin.Split(0.2, 7)
	m, tr, ho := trainForAudit(b, train, held, auditRecipe{dim: 128, filters: 100, widths: []int{3, 4, 5}, epochs: 1, maxLen: 256, minCount: 2, seed: 1})
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := RunAudit(context.Background(), m, tr, ho, AuditOptions{Seed: 1}, nil); err != nil {
			b.Fatal(err)
		}
	}
}
