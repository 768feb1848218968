package main

import "testing"

// The help text shows float32 defaults in their shortest decimal form,
// and the flag's value converts back to the same float32 (common
// practice, no source: strconv's shortest form round-trips, its doc says).
func TestDecimal32(t *testing.T) {
	for _, tc := range []struct {
		in   float32
		want float64
	}{{0.3, 0.3}, {0.5, 0.5}, {0, 0}, {3, 3}, {0.1, 0.1}, {1e-7, 1e-7}} {
		got := decimal32(tc.in)
		if got != tc.want {
			t.Errorf("decimal32(%v) = %v, want %v", tc.in, got, tc.want)
		}
		if float32(got) != tc.in {
			t.Errorf("float32(decimal32(%v)) = %v", tc.in, float32(got))
		}
	}
}
