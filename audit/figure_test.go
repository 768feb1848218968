package audit

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// TestFigure: a figure read back from what Figure writes is the figure to
// the digits shown (three decimals, or two significant digits below
// 0.0005 in size), and no nonzero figure reads as zero; zero, of either
// sign, is "0.000". The export's label_drop of a SpamAssassin cue,
// 0.00024 (8.3e-05–0.00048), is the worked example.
func TestFigure(t *testing.T) {
	for x, want := range map[float64]string{0.00024: "0.00024", 8.3e-05: "8.3e-05", 0.00048: "0.00048",
		0.2104: "0.210", -0.0001: "-0.0001", 0: "0.000", math.Copysign(0, -1): "0.000", 0.0005: "0.001"} {
		if got := Figure(x); got != want {
			t.Errorf("Figure(%g) = %q, want %q", x, got, want)
		}
	}
	rng := rand.New(rand.NewPCG(5, 5))
	for range 10000 {
		x := math.Copysign(math.Pow(10, -8+8*rng.Float64()), rng.Float64()-0.5)
		s := Figure(x)
		back, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("Figure(%g) = %q: %v", x, s, err)
		}
		tol := 0.0005 // half the last of three decimals
		if math.Abs(x) < 0.0005 {
			tol = 0.05 * math.Abs(x) // half the last of two significant digits, at most
		}
		if back == 0 || math.Abs(back-x) > tol*(1+1e-9) {
			t.Fatalf("Figure(%g) = %q reads back as %g", x, s, back)
		}
	}
}

// TestWordPartMinimum: the word part of a cue's words follows the
// minimum of a reliance (minCueTexts): over fewer confirming texts it is
// not given (nil), and the cue's lines say so in the reliance's words;
// from the minimum on it is.
func TestWordPartMinimum(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	d := Data{IDs: make([][]int32, 12)}
	for i := range d.IDs {
		d.IDs[i] = []int32{2, 3, int32(4 + i%5)}
	}
	a := &auditor{m: bigramModel(t, rng, d.IDs), conf: d, opt: Options{Bootstrap: 200, Seed: 3}}
	for n := minCueTexts - 2; n <= minCueTexts+1; n++ {
		c := &Candidate{Text: "b", Words: []string{"b"}, Label: "a"}
		for i := range n {
			c.confOcc = append(c.confOcc, span{text: int32(i), start: 1, end: 2})
		}
		wp := a.wordPart(c, []int32{3})
		if (wp != nil) != (n >= minCueTexts) {
			t.Errorf("cue in %d confirming texts: word part %v (the minimum is %d)", n, wp, minCueTexts)
		}
		c.Filters = &Filters{Words: []string{"b"}, WordTexts: n, WordPart: wp}
		var buf bytes.Buffer
		(&Result{}).writeCue(&buf, 1, c)
		if few := strings.Contains(buf.String(), tooFewTexts(n)); few != (wp == nil) {
			t.Errorf("cue in %d confirming texts, word part %v: the lines say\n%s", n, wp, buf.String())
		}
	}
}
