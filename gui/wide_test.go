package gui

import (
	"context"
	"math"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"fyne.io/fyne/v2"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// wideVerdict reads back the split in the verdict line of a model with the
// wide path: the value, the output bias with the unknown word's weight, the
// filter biases, the token shares and the word weights of them.
var wideVerdict = regexp.MustCompile(` = (-?[0-9.]+) = output bias with the unknown word's weight ([+-][0-9.]+) \+ filter biases ([+-][0-9.]+) \+ token shares ([+-][0-9.]+) \(word weights ([+-][0-9.]+)\)\.$`)

// wideDetail reads back a token's exact share and its word weight.
var wideDetail = regexp.MustCompile(`Exact share of .+: ([+-][0-9.]+) \(of which word weight ([+-][0-9.]+)\)`)

// TestWhyThisLabelWide: for a model with word weights alone, opened in
// the window, Why this label's verdict names the unknown word's weight in
// the output bias and the word weights in the token shares, for the
// log-odds and for a label's centred logit, and a token's detail gives its
// word weight. The numbers shown, read back, add up to the value shown, and
// the output bias and word weights are those computed here from the
// model's weights: Σ_c v_c·(OutB[c] + Wide[UNK][c]), Σ_i Σ_c
// v_c·(Wide[x_i][c] − Wide[UNK][c])/N and token i's term of that sum (the
// split documented in explain.Shares). The verdict writes 4 decimals and
// the detail 5: each number is off by half a unit of the last at most.
func TestWhyThisLabelWide(t *testing.T) {
	_, st, q := demoWindow(t, fyne.Size{})
	cs := itemGet(st.data)
	n := 0
	train := cs.Train.Filter(func(corpus.Example) bool { n++; return n <= 1500 })
	r := cnn.DefaultRecipe()
	r.Baseline = nil
	r.Model.Wide, r.Model.WideBigrams = true, false // the words' weights alone: the sums below
	r.Model.Dim, r.Model.Widths, r.Model.Filters = 16, []int{2, 3}, 8
	r.Train.Epochs, r.Train.Threads, r.Train.Patience = 3, 2, -1
	trained, err := cnn.TrainText(context.Background(), train, nil, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := trained.Model
	path := filepath.Join(t.TempDir(), "wide.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	st.openModel(path, nil)
	q.waitFor(t, "the opened model", func() bool { ms := itemGet(st.model); return ms != nil && ms.Eval != nil })

	text := "my ticket was lost and the ferry left without me, please refund"
	_ = st.explainText.Set(text)
	q.waitFor(t, "the explanation", func() bool { return st.whyView.shown != nil && st.whyView.shown.Text == text })
	e := st.whyView.shown.E
	_, ids := trained.Encoder.Encode(text)
	C := m.Config.Classes
	unk := int(corpus.UNK) * C
	words := 0
	for _, id := range ids {
		if id != corpus.PAD {
			words++
		}
	}
	// wordWeight is token i's word weight of the contrast v.
	wordWeight := func(v []float64, i int) float64 {
		if ids[i] == corpus.PAD {
			return 0
		}
		var s float64
		for c := range C {
			s += v[c] * (float64(m.Wide[int(ids[i])*C+c]) - float64(m.Wide[unk+c])) / float64(words)
		}
		return s
	}
	other := (e.Class + 1) % C
	logOdds, centred := make([]float64, C), make([]float64, C)
	logOdds[e.Class], logOdds[e.RunnerUp] = 1, -1
	for c := range centred {
		centred[c] = -1 / float64(C)
	}
	centred[other]++
	for _, tc := range []struct {
		class string
		v     []float64
	}{{classPredicted, logOdds}, {e.Labels[other], centred}} {
		st.whyView.class.SetSelected(tc.class)
		line := st.whyView.verdict.Text
		mt := wideVerdict.FindStringSubmatch(line)
		if mt == nil {
			t.Fatalf("%s: the verdict does not name the wide path's parts: %q", tc.class, line)
		}
		got := testref.Floats(t, mt) // value, bias, filter biases, tokens, words
		const half = 5e-5
		if !testref.Close(got[0], got[1]+got[2]+got[3], 4*half, 0) {
			t.Errorf("%s: %q does not add up (%g)", tc.class, mt[0], got[1]+got[2]+got[3])
		}
		var bias, ww float64
		for c := range C {
			bias += tc.v[c] * (float64(m.OutB[c]) + float64(m.Wide[unk+c]))
		}
		for i := range ids {
			ww += wordWeight(tc.v, i)
		}
		if !testref.Close(got[1], bias, half+1e-6, 0) || !testref.Close(got[4], ww, half+1e-6, 0) {
			t.Errorf("%s: %q: output bias %+.6f and word weights %+.6f from the model's weights", tc.class, mt[0], bias, ww)
		}
		if math.Abs(ww) < 100*half {
			t.Errorf("%s: word weights %+.6f too small to tell apart from zero: the check checks little", tc.class, ww)
		}
		// Each token's detail, as a click on its chip shows it.
		for i := range e.Tokens {
			st.whyView.painted.Objects[i].(*heatCell).onTap()
			d := st.whyView.detail.Text
			md := wideDetail.FindStringSubmatch(d)
			if md == nil {
				t.Fatalf("%s, token %d: the detail gives no word weight: %q", tc.class, i, d)
			}
			if got := testref.Floats(t, md); !testref.Close(got[1], wordWeight(tc.v, i), 5e-6+1e-7, 0) {
				t.Errorf("%s, token %d: %q: word weight %+.7f from the model's weights", tc.class, i, md[0], wordWeight(tc.v, i))
			}
		}
	}
	if note := st.whyView.keptNote.Text; !strings.Contains(note, "word weights") {
		t.Errorf("the kept-down table's note does not say the measured change holds word weights: %q", note)
	}
	if strings.Contains(keptCaption(false), "word") {
		t.Errorf("the kept-down note without word weights names them: %q", keptCaption(false))
	}
	// Without the path the verdict is as it was: no word weights named.
	bare := *e
	bare.LogOdds.Words = nil
	if line := verdict(&bare, -1); strings.Contains(line, "word") || !strings.Contains(line, " = output bias ") {
		t.Errorf("the verdict of a split without word weights names them: %q", line)
	}
}
