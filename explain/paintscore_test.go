package explain

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// appendScore writes what fmt's %+.2f writes (the standard library is the
// reference), signed zeros, roundings at the half, infinities and NaN
// included.
func TestAppendScoreIsFmt(t *testing.T) {
	cases := []float64{0, math.Copysign(0, -1), 1.005, -1.005, 0.004999, -0.004999, 0.005, -0.005, 1e21, -1e-9,
		math.Inf(1), math.Inf(-1), math.NaN(), 123.456, -0.0049}
	rng := rand.New(rand.NewPCG(48, 48))
	for range 2000 {
		cases = append(cases, rng.NormFloat64()*math.Pow(10, float64(rng.IntN(8)-4)))
	}
	for _, v := range cases {
		if got, want := string(appendScore(nil, v)), fmt.Sprintf("%+.2f", v); got != want {
			t.Errorf("%v: %q, fmt writes %q", v, got, want)
		}
	}
}
