package main

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"strings"
	"testing"
)

// prediction is predict's JSON line as encoding/json writes it: the
// reference that predictionJSON is checked against.
type prediction struct {
	Text          string             `json:"text"`
	Line          int                `json:"line,omitempty"`
	File          string             `json:"file,omitempty"`
	Label         string             `json:"label"`
	Probabilities map[string]float64 `json:"probabilities"`
}

// referenceJSONLine is the line encoding/json gives (json.Marshal and a
// newline, as predict printed before its lines were written by hand).
func referenceJSONLine(labels []string, t text, probs []float32) ([]byte, error) {
	p := prediction{Text: t.Text, Line: t.Line, File: t.File, Label: labels[argmax(probs)], Probabilities: map[string]float64{}}
	for c, l := range labels {
		p.Probabilities[l] = float64(probs[c])
	}
	return jsonLine(p)
}

// referenceTextLine is the plain line written with fmt, as predict printed
// it before.
func referenceTextLine(labels []string, t text, probs []float32) string {
	var sb strings.Builder
	fmt.Fprintf(&sb, "%s\t", labels[argmax(probs)])
	for c, l := range labels {
		if c > 0 {
			sb.WriteString(" ")
		}
		fmt.Fprintf(&sb, "%s=%.3f", l, probs[c])
	}
	fmt.Fprintf(&sb, "\t%s\n", oneLine(t.Text, 60))
	return sb.String()
}

// checkLines compares both hand-written lines with their references.
func checkLines(t *testing.T, labels []string, tx text, probs []float32) {
	t.Helper()
	want, werr := referenceJSONLine(labels, tx, probs)
	got, gerr := newPredictionJSON(labels).appendLine([]byte("prefix"), tx, probs)
	if (werr != nil) != (gerr != nil) {
		t.Fatalf("%+q %v: error %v, encoding/json's %v", tx.Text, probs, gerr, werr)
	}
	if werr == nil && string(got) != "prefix"+string(want) {
		t.Fatalf("%+q %v %q:\n got %s\nwant %s", tx.Text, probs, labels, got[6:], want)
	}
	if werr != nil {
		return
	}
	if got, want := string(appendTextLine(nil, labels, tx, probs)), referenceTextLine(labels, tx, probs); got != want {
		t.Fatalf("%+q %v: plain line\n got %q\nwant %q", tx.Text, probs, got, want)
	}
}

func TestPredictionLinesMatchReference(t *testing.T) {
	texts := []string{"", "plain", `quote " and \ back`, "<b>&amp;</b>", "tab\tnew\nline\r\b\f\x00\x1f\x7f",
		"bad \xff\xfe utf8 \xc3", "line sep \u2028 para \u2029", "émoji 😀 日本", strings.Repeat("long text ", 20)}
	probs := [][]float32{{0.25, 0.75}, {1, 0}, {1e-7, 1 - 1e-7}, {3.4e-38, 1}, {1e-45, 0.5}, {0.1, 0.2},
		{float32(math.NaN()), 0.5}, {float32(math.Inf(1)), 0}, {-0, 0.123456789}, {5e-7, 2e-6}}
	labelSets := [][]string{{"ham", "spam"}, {"z", "a"}, {"<x>", "\"q\""}, {"same", "same"}}
	for _, labels := range labelSets {
		for i, s := range texts {
			for _, p := range probs {
				checkLines(t, labels, text{Text: s, Line: i, File: []string{"", "a/b.csv", "<&>"}[i%3]}, p)
			}
		}
	}
}

// FuzzPredictionLines checks the hand-written lines against encoding/json
// and fmt on any text, file name, labels and probabilities.
func FuzzPredictionLines(f *testing.F) {
	f.Add("hello <world>", "f.csv", 3, "ham", "spam", uint32(0x3e800000), uint32(0x3f400000))
	f.Add("\xff\u2028\x01", "", 0, "a", "a", uint32(1), uint32(0x7fc00000))
	f.Fuzz(func(t *testing.T, s, file string, line int, l1, l2 string, p1, p2 uint32) {
		probs := []float32{math.Float32frombits(p1), math.Float32frombits(p2)}
		checkLines(t, []string{l1, l2}, text{Text: s, Line: line, File: file}, probs)
	})
}

// TestLineReaderMatchesScanner checks lineReader against bufio.Scanner
// with ScanLines, what eachLine read lines with before.
func TestLineReaderMatchesScanner(t *testing.T) {
	for _, in := range []string{"", "a", "a\n", "a\r\nb\r\n", "\n\n", "x\ry\n", "\r", "last\r", "one\ntwo",
		strings.Repeat("w", 300<<10) + "\nshort\n" + strings.Repeat("v", 600<<10)} {
		checkLineReader(t, in)
	}
}

func checkLineReader(t *testing.T, in string) {
	t.Helper()
	sc := bufio.NewScanner(strings.NewReader(in))
	sc.Buffer(make([]byte, 64*1024), maxStdinLine)
	var want []string
	for sc.Scan() {
		want = append(want, sc.Text())
	}
	lr := &lineReader{r: bufio.NewReaderSize(strings.NewReader(in), 256<<10)}
	var got []string
	for {
		line, err := lr.next()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("%.40q: %v", in, err)
		}
		got = append(got, string(line))
	}
	if fmt.Sprint(got) != fmt.Sprint(want) || len(got) != len(want) {
		t.Fatalf("%.40q: lines %.80q, bufio.Scanner %.80q", in, got, want)
	}
}

func FuzzLineReader(f *testing.F) {
	f.Add("a\r\nb\n\nc")
	f.Fuzz(func(t *testing.T, in string) { checkLineReader(t, in) })
}

// TestPredictStreamOrder runs the batch pipeline on many lines with every
// core and checks that its output is one line per input line in input
// order, each the line that labeling the text alone gives, with its line
// number; standard-input batching (blank lines, line ends, a last line
// without end) included: a blank line gives a blank object of its own.
func TestPredictStreamOrder(t *testing.T) {
	model := tinyModel(t)
	m, enc, err := openModel(model)
	if err != nil {
		t.Fatal(err)
	}
	var in strings.Builder
	var lines []string // every input line, blank ones as ""
	for i := range 3000 {
		s := fmt.Sprintf("text %d about a lost bag %s refund", i, strings.Repeat("ferry late ", i%37))
		lines = append(lines, s)
		in.WriteString(s)
		in.WriteString([]string{"\n", "\r\n", "\n  \n", "\n\t\n"}[i%4])
		if i%4 >= 2 {
			lines = append(lines, "")
		}
	}
	in.WriteString("the last line")
	lines = append(lines, "the last line")
	var want bytes.Buffer
	format := predictFormat(m.Labels, true)
	for n, s := range lines {
		if s == "" {
			fmt.Fprintf(&want, "{\"line\":%d,\"blank\":true}\n", n+1)
			continue
		}
		_, ids := enc.Encode(s)
		b, err := format(nil, text{Text: s, Line: n + 1}, m.Predict(ids).Probs)
		if err != nil {
			t.Fatal(err)
		}
		want.Write(b)
	}
	var got bytes.Buffer
	var kept []string
	keep := func(tx text, _ []float32) { kept = append(kept, tx.Text) }
	if err := predictStream(t.Context(), lineBatches(strings.NewReader(in.String()), nil, 0), m, enc, &got, format, keep); err != nil {
		t.Fatal(err)
	}
	if got.String() != want.String() {
		g, w := strings.Split(got.String(), "\n"), strings.Split(want.String(), "\n")
		for i := range min(len(g), len(w)) {
			if g[i] != w[i] {
				t.Fatalf("line %d of %d (want %d):\n got %s\nwant %s", i, len(g), len(w), g[i], w[i])
			}
		}
		t.Fatalf("%d lines, want %d", len(g), len(w))
	}
	if fmt.Sprint(kept) != fmt.Sprint(lines) {
		t.Errorf("keep got %d texts, not the %d lines in input order", len(kept), len(lines))
	}
}
