package gui

import (
	"fmt"
	"image/color"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// rankStrip shows the class probabilities of one prediction as a single
// strip under the verdict: one segment per class, as long as its
// probability, largest first from the left; the predicted class in the
// theme's primary colour, the others in fading greys; below it, the same
// ranking in words. Segments too short for their name carry none.
type rankStrip struct {
	widget.BaseWidget
	labels []string  // in rank order
	probs  []float64 // in rank order
}

func newRankStrip() *rankStrip {
	s := &rankStrip{}
	s.ExtendBaseWidget(s)
	return s
}

// set shows probs (by class, named by labels), ranked.
func (s *rankStrip) set(labels []string, probs []float64) {
	idx := make([]int, len(probs))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return probs[idx[a]] > probs[idx[b]] })
	s.labels, s.probs = nil, nil
	for _, i := range idx {
		s.labels = append(s.labels, labels[i])
		s.probs = append(s.probs, probs[i])
	}
	s.Refresh()
}

// words is the ranking written out: "complaints 0.712 · praise 0.201 · …".
func (s *rankStrip) words() string {
	parts := make([]string, len(s.labels))
	for i, l := range s.labels {
		parts[i] = fmt.Sprintf("%s %.3f", l, s.probs[i])
	}
	return strings.Join(parts, "  ·  ")
}

func (s *rankStrip) CreateRenderer() fyne.WidgetRenderer {
	r := &rankStripRenderer{s: s, ranking: widget.NewLabel("")}
	r.ranking.Wrapping = fyne.TextWrapWord
	r.rebuild()
	return r
}

type rankStripRenderer struct {
	s       *rankStrip
	segs    []*canvas.Rectangle
	names   []*canvas.Text
	ranking *widget.Label
}

// stripHeight is the height of the strip itself.
const stripHeight = 22

// segmentColor is the colour of rank i: the primary colour first, then
// greys that fade toward the background.
func segmentColor(i int) color.Color {
	if i == 0 {
		return theme.Color(theme.ColorNamePrimary)
	}
	fg := color.NRGBAModel.Convert(theme.Color(theme.ColorNameForeground)).(color.NRGBA)
	fg.A = uint8(max(40, 150-30*i))
	return fg
}

func (r *rankStripRenderer) rebuild() {
	r.segs, r.names = nil, nil
	for i, l := range r.s.labels {
		seg := canvas.NewRectangle(segmentColor(i))
		name := canvas.NewText(l, theme.Color(theme.ColorNameForeground))
		if i == 0 {
			name.Color = inkOn(color.NRGBAModel.Convert(theme.Color(theme.ColorNamePrimary)).(color.NRGBA))
		}
		name.TextSize = theme.CaptionTextSize()
		r.segs = append(r.segs, seg)
		r.names = append(r.names, name)
	}
	r.ranking.SetText(r.s.words())
}

func (r *rankStripRenderer) Layout(size fyne.Size) {
	x := float32(0)
	for i, seg := range r.segs {
		w := float32(r.s.probs[i]) * size.Width
		seg.Move(fyne.NewPos(x, 0))
		seg.Resize(fyne.NewSize(w, stripHeight))
		name := r.names[i]
		ns := name.MinSize()
		name.Move(fyne.NewPos(x+4, (stripHeight-ns.Height)/2))
		name.Resize(ns)
		if ns.Width+8 > w {
			name.Hide()
		} else {
			name.Show()
		}
		x += w
	}
	r.ranking.Move(fyne.NewPos(0, stripHeight))
	r.ranking.Resize(fyne.NewSize(size.Width, size.Height-stripHeight))
}

func (r *rankStripRenderer) MinSize() fyne.Size {
	if len(r.segs) == 0 {
		return fyne.Size{}
	}
	m := r.ranking.MinSize()
	return fyne.NewSize(m.Width, stripHeight+m.Height)
}

func (r *rankStripRenderer) Refresh() {
	r.rebuild()
	r.Layout(r.s.Size())
	canvas.Refresh(r.s)
}

func (r *rankStripRenderer) Objects() []fyne.CanvasObject {
	objs := []fyne.CanvasObject{r.ranking}
	for i := range r.segs {
		objs = append(objs, r.segs[i], r.names[i])
	}
	return objs
}

func (r *rankStripRenderer) Destroy() {}
