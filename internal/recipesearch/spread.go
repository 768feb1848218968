package main

import (
	"fmt"
	"math"
	"math/rand/v2"
	"regexp"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
)

// A dev-side measure of how much a recipe leans on the demo's two planted
// cues (testdata/demo/README.md), for screening candidates without the
// test split whose cues are spread evenly (testdata/demo/test.csv): each
// dev message loses its cues, then every team's messages get the footer
// and, independently, the ticket stamp at spreadRate, as the demo's test
// split has them. A model that learned the cues loses more on it than on
// dev as it is.

const (
	demoFooter = "-- sent via KioskMail at the quayside terminal --"
	spreadRate = 0.40 // the demo test split's rate of each cue in every team
	spreadSeed = 17   // fixed, so that every candidate sees the same set
)

var demoStamp = regexp.MustCompile(`^TKREF-[0-9]{5}$`)

// withoutCues drops a last line equal to the footer and a first line that
// is a ticket stamp.
func withoutCues(s string) string {
	lines := strings.Split(s, "\n")
	if n := len(lines); n > 1 && lines[n-1] == demoFooter {
		lines = lines[:n-1]
	}
	if len(lines) > 1 && demoStamp.MatchString(lines[0]) {
		lines = lines[1:]
	}
	return strings.Join(lines, "\n")
}

// spreadCues returns d's messages without their cues, then with each cue
// on round(spreadRate·n) of every label's n messages, drawn at random.
func spreadCues(d *corpus.Dataset) *corpus.Dataset {
	out := d.MapTexts(withoutCues)
	r := rand.New(rand.NewPCG(spreadSeed, 0))
	for _, label := range out.Labels {
		var idx []int
		for i, e := range out.Examples {
			if e.Label == label {
				idx = append(idx, i)
			}
		}
		k := int(math.Round(spreadRate * float64(len(idx))))
		for _, j := range r.Perm(len(idx))[:k] {
			out.Examples[idx[j]].Text += "\n" + demoFooter
		}
		for _, j := range r.Perm(len(idx))[:k] {
			e := &out.Examples[idx[j]]
			e.Text = fmt.Sprintf("TKREF-%05d\n%s", r.IntN(100000), e.Text)
		}
	}
	return out
}

// spreadCells scores m (and its baseline, when it has one) on the dev
// split with the cues spread (spreadCues).
func spreadCells(m *cnn.Model, dev *corpus.Dataset, threads int) (string, error) {
	sd := spreadCues(dev)
	if m.Baseline != nil {
		cmp, err := cnn.CompareBaseline(m, sd, threads)
		if err != nil {
			return "", err
		}
		return fmt.Sprintf(" spread dev %.4f / %.4f | baseline %.4f / %.4f | (only CNN %d, only baseline %d) |",
			cmp.CNN.Accuracy, cmp.CNN.MacroF1, cmp.Baseline.Accuracy, cmp.Baseline.MacroF1,
			cmp.McNemar.OnlyA, cmp.McNemar.OnlyB), nil
	}
	enc, err := m.Encoder()
	if err != nil {
		return "", err
	}
	dd, err := cnn.EncodeDataset(enc, sd, m.Labels, threads)
	if err != nil {
		return "", err
	}
	mt, _, err := cnn.Evaluate(m, dd, threads)
	if err != nil {
		return "", err
	}
	return fmt.Sprintf(" spread dev %.4f / %.4f |", mt.Accuracy, mt.MacroF1), nil
}
