package report

import (
	"encoding/base64"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestChromiumConfusionLabelsClear draws the confusion matrix of the demo
// corpus's labels (long ones, drawn rotated) and of SpamAssassin's (short
// ones) and lays it out in headless Chromium, whose fonts are not the one
// gonum/plot measured the labels in: every axis label must lie whole inside
// the picture and clear of the cells (as the browser places it, to half a
// pixel).
func TestChromiumConfusionLabelsClear(t *testing.T) {
	needChromium(t)
	for _, labels := range [][]string{
		{"bookings", "complaints", "lost-property", "praise", "timetable"}, // testdata/demo
		{"ham", "spam"}, // SpamAssassin
	} {
		t.Run(strings.Join(labels, ","), func(t *testing.T) {
			conf := make([][]int, len(labels))
			for i := range conf {
				conf[i] = make([]int, len(labels))
				for j := range conf[i] {
					conf[i][j] = 10*i + j
				}
			}
			url, err := confusionPlot(labels, conf)
			if err != nil {
				t.Fatal(err)
			}
			svg, err := base64.StdEncoding.DecodeString(strings.TrimPrefix(string(url), "data:image/svg+xml;base64,"))
			if err != nil {
				t.Fatal(err)
			}
			body := string(svg[strings.Index(string(svg), "<svg"):])
			file := filepath.Join(t.TempDir(), "confusion.html")
			if err := os.WriteFile(file, []byte(`<!DOCTYPE html><html><head><title>c</title></head><body style="margin:0">`+body+`</body></html>`), 0o644); err != nil {
				t.Fatal(err)
			}
			names, _ := json.Marshal(labels)
			run := chromiumProbe(t, file, false, `(() => {
				const box = e => { const q = e.getBoundingClientRect(); return {text: e.textContent, l: q.left, t: q.top, r: q.right, b: q.bottom}; };
				const svg = document.querySelector('svg');
				const cells = [...svg.querySelectorAll('path')].slice(1).filter(p => /Z$/.test(p.getAttribute('d'))).map(box);
				const names = `+string(names)+`;
				return {svg: box(svg), cells, labels: [...svg.querySelectorAll('text')].filter(e => names.includes(e.textContent)).map(box)};
			})()`)
			type rect struct {
				Text       string
				L, T, R, B float64
			}
			var got struct {
				SVG    rect
				Cells  []rect
				Labels []rect
			}
			if err := json.Unmarshal(run.DOM.Probe, &got); err != nil {
				t.Fatalf("probe %s: %v", run.DOM.Probe, err)
			}
			if len(got.Cells) != len(labels)*len(labels) || len(got.Labels) != 2*len(labels) {
				t.Fatalf("%d cells and %d axis labels found, want %d and %d", len(got.Cells), len(got.Labels), len(labels)*len(labels), 2*len(labels))
			}
			const slack = 0.5 // px, the browser's rounding
			for _, l := range got.Labels {
				if l.L < got.SVG.L-slack || l.T < got.SVG.T-slack || l.R > got.SVG.R+slack || l.B > got.SVG.B+slack {
					t.Errorf("label %q at %+v runs out of the picture %+v", l.Text, l, got.SVG)
				}
				for _, c := range got.Cells {
					if l.L < c.R-slack && c.L < l.R-slack && l.T < c.B-slack && c.T < l.B-slack {
						t.Errorf("label %q at %+v runs into the cell at %+v", l.Text, l, c)
						break
					}
				}
			}
		})
	}
}
