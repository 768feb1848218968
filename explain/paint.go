package explain

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
)

// diverging is ColorBrewer's 11-class PuOr scheme (Brewer 2003, "A
// Transition in Improving Maps: The ColorBrewer Example", Cartography and
// Geographic Information Science 30(2); the scheme is marked colour-blind
// safe there), orange for negative through white to purple for positive.
// Hex values from memory of colorbrewer2.org.
var diverging = [11][3]uint8{
	{0x7f, 0x3b, 0x08}, {0xb3, 0x58, 0x06}, {0xe0, 0x82, 0x14}, {0xfd, 0xb8, 0x63},
	{0xfe, 0xe0, 0xb6}, {0xf7, 0xf7, 0xf7}, {0xd8, 0xda, 0xeb}, {0xb2, 0xab, 0xd2},
	{0x80, 0x73, 0xac}, {0x54, 0x27, 0x88}, {0x2d, 0x00, 0x4b},
}

// scaleIndex maps v in [−scale, scale] to a class of the diverging scheme.
func scaleIndex(v, scale float64) int {
	i := 5 + int(math.Round(v/scale*5))
	return min(max(i, 0), 10)
}

func ansi(i int, s string) string {
	c := diverging[i]
	fg := "0;0;0"
	if i <= 1 || i >= 9 {
		fg = "255;255;255"
	}
	return fmt.Sprintf("\x1b[48;2;%d;%d;%dm\x1b[38;2;%sm%s\x1b[0m", c[0], c[1], c[2], fg, s)
}

// Paint paints the explained text by one method's identified token scores
// (Scores): class −1 paints the shares of the log-odds of the predicted
// class against the runner-up, a class from 0 the shares of its centred
// logit; occlusion paints the drop of p(ŷ) whatever class is. With color,
// each token gets a 24-bit ANSI background on a diverging scale normalised
// to the largest |score|; without, each token is followed by its score, as
// in word[+0.42]. Text is the original text the tokens' byte offsets point
// into; when it is empty or the offsets do not fit it, the tokens are
// written separated by spaces. A legend line follows.
func Paint(w io.Writer, text string, e *Explanation, method string, class int, color bool) error {
	if class < -1 || class >= len(e.Labels) {
		return fmt.Errorf("explain: class %d: the model has classes 0…%d (−1: the predicted one against the runner-up)", class, len(e.Labels)-1)
	}
	scores := Scores(e, method, class)
	if scores == nil {
		return fmt.Errorf("explain: the explanation has no %q attributions: ask for it in ExplainOptions", method)
	}
	var legend string
	switch {
	case method == MethodOcclusion:
		legend = fmt.Sprintf("occlusion: drop of p(%s)", e.Label)
	case class < 0:
		legend = fmt.Sprintf("%s share of log p(%s)/p(%s)", method, e.Label, e.Labels[e.RunnerUp])
	default:
		legend = fmt.Sprintf("%s share of the centred logit of %q", method, e.Labels[class])
	}
	return paintScores(w, text, e, scores, legend, color)
}

// paintScores writes the text painted by scores, then the legend line.
func paintScores(w io.Writer, text string, e *Explanation, scores []float64, legend string, color bool) error {
	scale := 0.0
	for _, v := range scores {
		scale = max(scale, math.Abs(v))
	}
	if scale == 0 {
		scale = 1
	}
	bw := bufio.NewWriter(w)
	var num []byte
	paint := func(i int, s string) {
		if color {
			bw.WriteString(ansi(scaleIndex(scores[i], scale), s))
			return
		}
		num = append(num[:0], s...)
		num = append(appendScore(append(num, '['), scores[i]), ']')
		bw.Write(num)
	}
	if offsetsFit(text, e.Tokens) {
		prev := 0
		for i, t := range e.Tokens {
			bw.WriteString(text[prev:t.Start])
			paint(i, text[t.Start:t.End])
			prev = t.End
		}
		bw.WriteString(text[prev:])
	} else {
		for i, t := range e.Tokens {
			if i > 0 {
				bw.WriteByte(' ')
			}
			paint(i, t.Text)
		}
	}
	bw.WriteByte('\n')
	fmt.Fprintf(bw, "%s: ", legend)
	if color {
		for i := range diverging {
			bw.WriteString(ansi(i, "  "))
		}
		fmt.Fprintf(bw, "  %+.3g … 0 … %+.3g (orange against, purple for)\n", -scale, scale)
	} else {
		fmt.Fprintf(bw, "scores from %+.3g to %+.3g (negative against, positive for)\n", -scale, scale)
	}
	return bw.Flush()
}

// appendScore appends v as fmt's %+.2f writes it, without fmt's cost per
// token.
func appendScore(dst []byte, v float64) []byte {
	if !math.Signbit(v) && !math.IsInf(v, 1) {
		dst = append(dst, '+')
	}
	return strconv.AppendFloat(dst, v, 'f', 2, 64)
}

func offsetsFit(text string, toks []TokenSpan) bool {
	if text == "" || len(toks) == 0 {
		return false
	}
	prev := 0
	for _, t := range toks {
		if t.Start < prev || t.End < t.Start || t.End > len(text) {
			return false
		}
		prev = t.End
	}
	return true
}
