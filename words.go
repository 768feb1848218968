package main

import (
	"strconv"
	"strings"
)

// change says how a probability moves by a drop d (positive: it falls):
// "falls by 0.029", "rises by 0.029", never a fall by a negative amount.
func change(d float64) string {
	switch {
	case d > 0:
		return "falls by " + strconv.FormatFloat(d, 'f', 3, 64)
	case d < 0:
		return "rises by " + strconv.FormatFloat(-d, 'f', 3, 64)
	}
	return "does not change"
}

// auditStage is an audit progress stage as the progress bar shows it: the
// audit's stage "held-out" (a name the window also keys on) is the pass
// over the test split.
func auditStage(stage string) string {
	return strings.Replace(stage, "held-out", "test split", 1)
}
