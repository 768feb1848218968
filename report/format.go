package report

import (
	"fmt"
	"math"
	"strconv"

	"telltale/internal/wording"
)

// Number formats used throughout the page (common practice, no source):
// shares and rates as percentages with one decimal, scores with three
// decimals, signed values always with their sign.

func pct(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return strconv.FormatFloat(100*x, 'f', 1, 64) + "%"
}

func num(x float64) string {
	switch {
	case math.IsNaN(x):
		return "–"
	case math.IsInf(x, 1):
		return "none"
	case math.IsInf(x, -1):
		return "-inf"
	}
	return strconv.FormatFloat(x, 'f', 3, 64)
}

func signed(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return num(x)
	}
	s := strconv.FormatFloat(x, 'f', 3, 64)
	if s == "-0.000" || s == "0.000" {
		return "0.000" // no sign on a value that rounds to zero
	}
	if s[0] != '-' {
		s = "+" + s
	}
	return s
}

// count writes n grouped by thousands: "1,200".
func count(n int) string { return wording.Thousands(n) }

func ints(v []int) string {
	s := ""
	for i, x := range v {
		if i > 0 {
			s += ", "
		}
		s += strconv.Itoa(x)
	}
	return s
}

func floatf(format string, x float64) string { return fmt.Sprintf(format, x) }
