package main

import (
	"strings"

	"telltale/audit"
)

// change says how a probability moves by a drop d (positive: it falls):
// "falls by 0.029", "rises by 0.029", never a fall by a negative amount.
// A move that three decimals would show as 0.000 is given to two
// significant digits ("rises by 0.00012"), so that a move is never said to
// be none.
func change(d float64) string {
	switch {
	case d > 0:
		return "falls by " + amount(d)
	case d < 0:
		return "rises by " + amount(-d)
	}
	return "does not change"
}

// amount writes a positive probability change: three decimals, or two
// significant digits below 0.0005 (audit.Figure, the audit's rule too).
func amount(x float64) string { return audit.Figure(x) }

// auditStage is an audit progress stage as the progress bar shows it: the
// audit's stage "held-out" (a name the window also keys on) is the pass
// over the test split.
func auditStage(stage string) string {
	return strings.Replace(stage, "held-out", "test split", 1)
}
