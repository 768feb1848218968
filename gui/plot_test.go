package gui

import (
	"image"
	"math"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// An axis of counts is marked with whole numbers written without
// decimals, at least two of them over any range that holds two, none
// outside the range; gonum/plot's own ticks write "25.00" and "2.50" there.
func TestCountTicksAreWhole(t *testing.T) {
	for top := 1.0; top <= 20000; top++ {
		for _, r := range [][2]float64{{0, top}, {0, 1.05 * top}, {top / 3, top}} {
			lo, hi := r[0], r[1]
			var labels []string
			for _, tk := range (countTicks{}).Ticks(lo, hi) {
				if tk.Value < lo || tk.Value > hi {
					t.Fatalf("[%g, %g]: tick %g outside the range", lo, hi, tk.Value)
				}
				if tk.Value != math.Trunc(tk.Value) {
					t.Fatalf("[%g, %g]: tick at %g, between two counts", lo, hi, tk.Value)
				}
				if tk.Label == "" {
					continue
				}
				if want := strconv.Itoa(int(tk.Value)); tk.Label != want {
					t.Fatalf("[%g, %g]: tick %g labelled %q, want %q", lo, hi, tk.Value, tk.Label, want)
				}
				labels = append(labels, tk.Label)
			}
			if whole := math.Floor(hi) - math.Ceil(lo) + 1; len(labels) < min(2, int(whole)) || len(labels) > 5 {
				t.Fatalf("[%g, %g]: labels %v, want 2 to 5", lo, hi, labels)
			}
		}
	}
	for _, bad := range [][2]float64{{1, 0}, {math.NaN(), 1}, {0, math.Inf(1)}} {
		if ts := (countTicks{}).Ticks(bad[0], bad[1]); ts != nil {
			t.Errorf("range %v: ticks %v, want none", bad, ts)
		}
	}
}

// drawPlot draws p on a w×h image at 72 dpi (one point a pixel), as the
// window's plot cell does, and returns the image and the canvas.
func drawPlot(p *plot.Plot, w, h int) (image.Image, draw.Canvas) {
	c := vgimg.NewWith(vgimg.UseWH(vg.Length(w), vg.Length(h)), vgimg.UseDPI(72))
	dc := draw.New(c)
	p.Draw(dc)
	return c.Image(), dc
}

// legendOutsideData checks that the pixels p's legend paints lie above the
// area where p draws its data: p is drawn as it is and again with its
// legend moved off the image (made by again), and every pixel that
// differs must be outside the data area that gonum/plot reports.
func legendOutsideData(t *testing.T, name string, p, again *plot.Plot) {
	t.Helper()
	const w, h = 400, 300
	with, dc := drawPlot(p, w, h)
	again.Legend.XOffs = -10 * w
	without, _ := drawPlot(again, w, h)
	data := p.DataCanvas(dc).Rectangle
	legend := 0
	for y := range h {
		for x := range w {
			if with.At(x, y) == without.At(x, y) {
				continue
			}
			legend++
			// Image rows run down, the plot's y up.
			px, py := vg.Length(x)+0.5, vg.Length(h-y)-0.5
			if px >= data.Min.X && px <= data.Max.X && py >= data.Min.Y && py <= data.Max.Y {
				t.Fatalf("%s: the legend paints pixel (%d, %d), inside the data area %v", name, x, y, data)
			}
		}
	}
	if legend == 0 {
		t.Fatalf("%s: no legend drawn", name)
	}
}

// The dev chart's legend stands apart from its curves, wherever they lie
// between 0 and 1, and its macro-F1 is dashed, so that accuracy shows
// where the two lines meet; the epoch axis is one of counts.
func TestDevChartLegendClearOfCurves(t *testing.T) {
	test.NewTempApp(t)
	xs := []float64{1, 2, 3, 4, 5, 6}
	for _, level := range []float64{0, 0.05, 0.5, 0.95, 1} {
		ys := []float64{level, level, level, level, level, level}
		legendOutsideData(t, "dev chart at "+strconv.FormatFloat(level, 'g', -1, 64), devPlot(xs, ys, ys), devPlot(xs, ys, ys))
	}
	p := devPlot(xs, xs, xs)
	if _, ok := p.X.Tick.Marker.(countTicks); !ok {
		t.Errorf("the epoch axis is marked by %T, want countTicks", p.X.Tick.Marker)
	}
}

// The Filters view's histogram keeps its legend off the bars and counts
// its texts in whole numbers; so does the Corpus view's length plot.
func TestHistogramsCountWholeTexts(t *testing.T) {
	_, st, _ := sharedLeanWindow(t, smallScreen)
	ps := itemGet(st.profiles)
	fp := &ps.P.Filters[0]
	hist := histogramPlot(fp)
	if !strings.Contains(hist.Y.Label.Text, "texts") {
		t.Fatalf("histogram's y axis %q", hist.Y.Label.Text)
	}
	legendOutsideData(t, "histogram", hist, histogramPlot(fp))
	lengths := lengthPlot(itemGet(st.data))
	for name, m := range map[string]plot.Ticker{"histogram texts": hist.Y.Tick.Marker,
		"lengths texts": lengths.Y.Tick.Marker, "lengths tokens": lengths.X.Tick.Marker} {
		if _, ok := m.(countTicks); !ok {
			t.Errorf("%s axis marked by %T, want countTicks", name, m)
		}
	}
}
