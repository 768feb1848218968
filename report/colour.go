package report

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/palette/brewer"
)

// The attribution scale is ColorBrewer's 11-class diverging "PuOr"
// (Purple-Orange) scheme, taken from gonum's copy of the ColorBrewer tables
// (gonum.org/v1/plot/palette/brewer; Brewer, Harrower & Hatchard,
// colorbrewer2.org; Harrower & Brewer 2003, "ColorBrewer.org: an online tool
// for selecting colour schemes for maps", The Cartographic Journal 40(1)),
// where it is marked as good for colour-blind readers. The desktop window
// uses the same scheme. Orange is the negative end, purple the positive end,
// the middle class is a neutral light grey.
var diverging = mustDiverging()

func mustDiverging() []color.Color {
	p, ok := brewer.PuOr[11]
	if !ok || len(p.Color) != 11 {
		panic("report: ColorBrewer PuOr-11 missing from gonum's brewer tables")
	}
	out := make([]color.Color, len(p.Color))
	copy(out, p.Color)
	return out
}

// sequential is the neutral-to-purple half of the diverging scheme, for
// quantities that are never negative (confusion counts).
var sequential = diverging[5:]

// rgb is an opaque colour as 8-bit channels.
type rgb struct{ R, G, B uint8 }

func toRGB(c color.Color) rgb {
	r, g, b, _ := c.RGBA()
	return rgb{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8)}
}

// css formats the colour as #rrggbb.
func (c rgb) css() string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

func (c rgb) color() color.Color { return color.NRGBA{c.R, c.G, c.B, 0xff} }

// ramp interpolates linearly between neighbouring anchors; u is clamped to
// [0, 1] and NaN gives the first anchor.
func ramp(anchors []color.Color, u float64) rgb {
	if math.IsNaN(u) {
		u = 0
	}
	u = math.Max(0, math.Min(1, u))
	x := u * float64(len(anchors)-1)
	i := int(math.Floor(x))
	if i >= len(anchors)-1 {
		return toRGB(anchors[len(anchors)-1])
	}
	f := x - float64(i)
	a, b := toRGB(anchors[i]), toRGB(anchors[i+1])
	mix := func(p, q uint8) uint8 { return uint8(math.Round(float64(p) + f*(float64(q)-float64(p)))) }
	return rgb{mix(a.R, b.R), mix(a.G, b.G), mix(a.B, b.B)}
}

// divergingAt maps v in [−scale, scale] onto the diverging scheme, clamping
// outside it. A non-positive scale or a NaN value gives the neutral middle.
func divergingAt(v, scale float64) rgb {
	if !(scale > 0) || math.IsNaN(v) {
		return toRGB(diverging[5])
	}
	return ramp(diverging, (v/scale+1)/2)
}

// sequentialAt maps v in [0, scale] onto the sequential half.
func sequentialAt(v, scale float64) rgb {
	if !(scale > 0) || math.IsNaN(v) {
		return toRGB(sequential[0])
	}
	return ramp(sequential, v/scale)
}

// ink is black or white, whichever contrasts more with background c, by the
// WCAG 2.x relative luminance and contrast ratio (W3C, "Web Content
// Accessibility Guidelines 2.1", definitions of relative luminance and
// contrast ratio).
func ink(c rgb) string {
	lin := func(v uint8) float64 {
		s := float64(v) / 255
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	l := 0.2126*lin(c.R) + 0.7152*lin(c.G) + 0.0722*lin(c.B)
	// Contrast against black is (l+0.05)/0.05, against white 1.05/(l+0.05).
	if (l+0.05)/0.05 >= 1.05/(l+0.05) {
		return "#111111"
	}
	return "#ffffff"
}
