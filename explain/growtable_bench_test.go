package explain

import (
	"testing"
)

// BenchmarkExplainCommand is the explain command's work per text: 100
// texts of 200 tokens, each one's words added to one growing table, then
// identified shares, every single-token occlusion and three kept-down
// windows (what `telltale explain` computes without --json). cpu-ms/op is
// per text.
func BenchmarkExplainCommand(b *testing.B) {
	m := benchModel(20000)
	texts := benchTexts(m, 100, 200)
	opt := ExplainOptions{Occlusion: true, KeptDown: 3}
	b.ReportAllocs()
	c0 := cpuTime()
	n := 0
	for b.Loop() {
		gt, err := NewGrowingTable(m, 0)
		if err != nil {
			b.Fatal(err)
		}
		for _, ids := range texts {
			opt.Table = gt.Add(ids)
			if _, err := Explain(m, nil, ids, opt); err != nil {
				b.Fatal(err)
			}
			n++
		}
	}
	b.ReportMetric(float64((cpuTime()-c0).Microseconds())/1000/float64(n), "cpu-ms/text")
}
