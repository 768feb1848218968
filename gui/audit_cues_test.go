package gui

import (
	"strings"
	"testing"

	"telltale/explain"
)

// The Cues tab lists every cue group with the numbers the audit computed,
// in the audit's order, and tells the selected group's story from them.
func TestGroupRows(t *testing.T) {
	a := &explain.Audit{CueGroups: []explain.CueGroup{
		{Words: []string{"kioskmail", "sent", "via"}, Label: "lost-property", TrainTexts: 783, LabelShare: 0.74,
			Filters: []int{60, 241, 231}, Score: 0.096, Parts: explain.GroupParts{FlaggedShare: 0.936, Harm: 0.1025},
			Ablation: explain.Ablation{Accuracy: 0.84375, AccuracyMasked: 0.85125},
			Conflict: explain.Conflict{Texts: 278, Accuracy: 0.813, AccuracyMasked: 0.903},
			Mask:     []int{60, 241}, MaskAblation: explain.Ablation{Accuracy: 0.84375, AccuracyMasked: 0.865}, MaskP: 0.0012,
			Shared: []string{"-"}},
		{Words: []string{"left"}, Label: "lost-property", TrainTexts: 348, LabelShare: 0.57, Filters: []int{111},
			Mask: []int{111}, Ablation: explain.Ablation{Accuracy: 0.84375, AccuracyMasked: 0.8463}},
	}}
	as := newAuditState(a, nil, nil)
	rows := groupRows(as)
	if len(rows) != 2 || len(rows[0]) != len(groupCols) {
		t.Fatalf("rows %v, want 2 rows of %d cells", rows, len(groupCols))
	}
	want := []string{"1", "kioskmail sent via", "lost-property", "783 (74%)", "3", "0.0960", "0.936", "+0.1025",
		"0.8438 → 0.8512", "0.813 → 0.903 (278 texts)", "2", "0.8438 → 0.8650 (p 0.0012)"}
	for c, w := range want {
		if rows[0][c] != w {
			t.Errorf("column %q = %q, want %q", groupCols[c], rows[0][c], w)
		}
	}
	if rows[1][0] != "2" || rows[1][9] != "—" {
		t.Errorf("second row %v: want rank 2 and no cue-conflicting texts", rows[1])
	}
	s := groupStory(as, 0)
	for _, w := range []string{"Cue group 1: kioskmail, sent, via", "3 filters key on it: 60, 241, 231", "0.8438 → 0.8512",
		"0.813 → 0.903 on the 278 texts of the test split", "strongest 2 (60, 241): 0.8438 → 0.8650", "nobody's cue: -"} {
		if !strings.Contains(s, w) {
			t.Errorf("story %q lacks %q", s, w)
		}
	}
	if groupRows(nil) != nil {
		t.Error("rows without an audit")
	}
}

// reflow undoes line breaks made for a terminal and keeps the ones that
// separate items (indented lines), sentences and lead-ins.
func TestReflow(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"read by filters whose\nmasking raises it:\n  (1) the words", "read by filters whose masking raises it:\n  (1) the words"},
		{"one.\ntwo", "one.\ntwo"},
		{"lead:\nnext", "lead:\nnext"},
		{"a\n\nb", "a\n\nb"},
		{"exact McNemar\np < 0.05) and\nfix", "exact McNemar p < 0.05) and fix"},
		{"  (2) item\n      Masking all", "  (2) item\n      Masking all"},
		{"", ""},
	} {
		if got := reflow(c.in); got != c.want {
			t.Errorf("reflow(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// The audit's story reads in the window's words: the test split, and no
// command line to type.
func TestWindowStory(t *testing.T) {
	story := "Masking all 17: held-out accuracy 0.834 → 0.849.\nTo try it:\n  telltale mask --model MODEL --filters 1,2 --out MODEL-masked.tt --data HELDOUT"
	got := windowStory(story)
	for _, bad := range []string{"held-out", "telltale mask", "MODEL", "HELDOUT"} {
		if strings.Contains(got, bad) {
			t.Errorf("the story shows %q: %q", bad, got)
		}
	}
	if !strings.Contains(got, "test accuracy 0.834 → 0.849") || !strings.Contains(got, "Tick the suggested mask") {
		t.Errorf("the story lost its figures or its advice: %q", got)
	}
}
