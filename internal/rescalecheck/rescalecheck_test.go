package rescalecheck

import "testing"

// recorder is a testing.TB that records failures instead of stopping.
type recorder struct {
	testing.TB
	errors, fatals int
}

func (r *recorder) Helper()               {}
func (r *recorder) Errorf(string, ...any) { r.errors++ }
func (r *recorder) Fatalf(string, ...any) { r.fatals++ }

func TestSame(t *testing.T) {
	ks := map[int]float32{0: 2, 1: 0.5}
	moved := [2][]float64{{1, 2, 3}, {2, 1, 3}}
	cases := []struct {
		name           string
		shown          [2][]string
		raw            [2][]float64
		errors, fatals int
	}{
		{"same texts, raw values moved", [2][]string{{"a", "b"}, {"a", "b"}}, moved, 0, 0},
		{"a text moved", [2][]string{{"a", "b"}, {"a", "c"}}, moved, 1, 0},
		{"raw values did not move", [2][]string{{"a"}, {"a"}}, [2][]float64{{1, 2}, {1, 2}}, 0, 1},
	}
	for _, c := range cases {
		r := &recorder{TB: t}
		Same(r, ks, c.shown, c.raw)
		if r.errors != c.errors || r.fatals != c.fatals {
			t.Errorf("%s: %d errors, %d fatal, want %d and %d", c.name, r.errors, r.fatals, c.errors, c.fatals)
		}
	}
}
