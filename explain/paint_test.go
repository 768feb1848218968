package explain

import (
	"bytes"
	"strings"
	"testing"
)

func paintCase() *Explanation {
	return &Explanation{
		Tokens: []TokenSpan{{Text: "not", Start: 4, End: 7}, {Text: "friendly", Start: 8, End: 16}, {Text: "!", Start: 16, End: 17}},
		Labels: []string{"complaint", "praise"}, Label: "complaint", Class: 0, RunnerUp: 1,
		Attributions: Attributions{Occlusion: []float64{0.25, -0.05, 0}},
		LogOdds:      Shares{Class: 0, Against: 1, Tokens: []float64{1.34, -0.52, 0}},
		Centred: []Shares{{Class: 0, Against: AgainstMean, Tokens: []float64{0.67, -0.26, 0}},
			{Class: 1, Against: AgainstMean, Tokens: []float64{-0.67, 0.26, 0}}},
	}
}

// Offsets that do not fit the text fall back to the token texts;
// occlusion is about the predicted class whatever class is asked.
func TestPaintFallbackOcclusion(t *testing.T) {
	var b bytes.Buffer
	if err := Paint(&b, "", paintCase(), MethodOcclusion, 1, false); err != nil {
		t.Fatal(err)
	}
	want := "not[+0.25] friendly[-0.05] ![+0.00]\nocclusion: drop of p(complaint): scores from -0.25 to +0.25 (negative against, positive for)\n"
	if b.String() != want {
		t.Fatalf("got %q\nwant %q", b.String(), want)
	}
}

// The most negative score gets the first class of PuOr, the most positive
// the last, zero the middle (white); 24-bit codes are used.
func TestPaintANSI(t *testing.T) {
	var b bytes.Buffer
	if err := Paint(&b, "Was not friendly!", paintCase(), MethodExact, 1, true); err != nil {
		t.Fatal(err)
	}
	s := b.String()
	for _, want := range []string{
		"Was \x1b[48;2;127;59;8m\x1b[38;2;255;255;255mnot\x1b[0m", // −0.67 of ±0.67: PuOr 7f3b08
		"\x1b[48;2;178;171;210m\x1b[38;2;0;0;0mfriendly\x1b[0m",   // +0.26/0.67 of scale: 5+round(1.94) = class 7 (b2abd2)
		"\x1b[48;2;247;247;247m\x1b[38;2;0;0;0m!\x1b[0m",          // f7f7f7
	} {
		if !strings.Contains(s, want) {
			t.Fatalf("missing %q in %q", want, s)
		}
	}
}

// Paint writes the identified shares: the log-odds of the predicted class
// against the runner-up by default, a class's centred logit when asked.
func TestPaintIdentified(t *testing.T) {
	e := paintCase()
	e.RunnerUp = 1
	e.LogOdds = Shares{Class: 0, Against: 1, Tokens: []float64{1.34, -0.52, 0}}
	e.Centred = []Shares{{Class: 0, Against: AgainstMean, Tokens: []float64{0.67, -0.26, 0}},
		{Class: 1, Against: AgainstMean, Tokens: []float64{-0.67, 0.26, 0}}}
	var b bytes.Buffer
	if err := Paint(&b, "Was not friendly!", e, MethodExact, -1, false); err != nil {
		t.Fatal(err)
	}
	want := "Was not[+1.34] friendly[-0.52]![+0.00]\nexact share of log p(complaint)/p(praise): scores from -1.34 to +1.34 (negative against, positive for)\n"
	if b.String() != want {
		t.Fatalf("got %q\nwant %q", b.String(), want)
	}
	b.Reset()
	if err := Paint(&b, "Was not friendly!", e, MethodExact, 1, false); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(b.String(), "Was not[-0.67] friendly[+0.26]![+0.00]\nexact share of the centred logit of \"praise\"") {
		t.Fatalf("got %q", b.String())
	}
	for _, c := range []struct {
		method string
		class  int
	}{{MethodIG, -1}, {MethodExact, 2}, {MethodExact, -2}} {
		if err := Paint(&b, "", e, c.method, c.class, false); err == nil {
			t.Fatalf("%s class %d: no error", c.method, c.class)
		}
	}
}
