package report

import (
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
)

// TestChromiumNoSidewaysScroll: a report whose explained example holds
// long words with no break opportunity (a web address, a long run of
// letters and digits, as SpamAssassin's texts do) fits a window 1,024 px
// wide in headless Chromium: the page is no wider than the window, so it
// does not scroll sideways (document scrollWidth against innerWidth).
func TestChromiumNoSidewaysScroll(t *testing.T) {
	needChromium(t)
	d := loadDemo(t)
	in := d.input
	long := "Refund at http://www.example.com/" + strings.Repeat("a1b2c3d4e5", 20) + "/index.html?id=" + strings.Repeat("9", 80) +
		" ref " + strings.Repeat("x", 150) + " please"
	in.Examples = append(append([]Example(nil), in.Examples...), exampleOf(t, d.model, long))
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(t.TempDir(), "report.html")
	if err := WriteFile(file, r); err != nil {
		t.Fatal(err)
	}
	run := chromiumProbeAt(t, file, false, 1024, `(() => {
		const w = document.documentElement.clientWidth;
		const wide = [...document.querySelectorAll('body *')].filter(e => e.getBoundingClientRect().right > w + 0.5 && e.parentElement.getBoundingClientRect().right <= w + 0.5)
			.slice(0, 5).map(e => e.tagName + '.' + e.className + ' ' + (e.textContent || '').slice(0, 40) + ' ' + Math.round(e.getBoundingClientRect().right));
		return {scroll: document.documentElement.scrollWidth, width: w, wide};
	})()`)
	var got struct {
		Scroll, Width float64
		Wide          []string
	}
	if err := json.Unmarshal(run.DOM.Probe, &got); err != nil {
		t.Fatalf("probe %s: %v", run.DOM.Probe, err)
	}
	if got.Width == 0 || got.Scroll > got.Width {
		t.Errorf("at 1,024 px the page is %.0f px wide in a window of %.0f: it scrolls sideways; too wide: %q", got.Scroll, got.Width, got.Wide)
	}
}
