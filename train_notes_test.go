package main

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"
)

// TestTrainSaysHowTheCIsChosen: train's line before the baseline's fit
// says its C is chosen on the dev split only when that split has texts;
// with none (4 texts, --force), the fit takes the grid's middle C
// (linear.RowsFit), and the line says so.
func TestTrainSaysHowTheCIsChosen(t *testing.T) {
	dir := t.TempDir()
	const chosen, middle = "its C chosen on the dev split", "its C the grid's middle: the dev split has no text to choose it on"
	for _, c := range []struct {
		data string
		want string
	}{
		{filepath.Join("testdata", "bad", "two-labels.csv"), middle},
		{sharedData(t, dir, 200, 0, false), chosen},
	} {
		code, _, stderr := tt(t, "train", "--data", c.data, "--out", filepath.Join(dir, "m.tt"), "--epochs", "1", "--dim", "4", "--maps", "2", "--force")
		noCrash(t, c.data, stderr)
		if code != 0 || !strings.Contains(stderr, "fitting the linear baseline (TF-IDF n-grams + logistic regression, "+c.want+")") {
			t.Errorf("%s: exit %d, want the line to say %q:\n%s", c.data, code, c.want, stderr)
		}
		if other := map[string]string{chosen: middle, middle: chosen}[c.want]; strings.Contains(stderr, other) {
			t.Errorf("%s: says %q:\n%s", c.data, other, stderr)
		}
	}
}

// TestTrainHintsAtSwappedColumns: train given the label column as the text
// and the text column as the label, on texts one of which is empty, stops
// at the empty label with the data error's exit code (1) and says that the
// columns may be swapped, naming both options.
func TestTrainHintsAtSwappedColumns(t *testing.T) {
	dir := t.TempDir()
	recs := readRecords(t, sharedData(t, dir, 120, 0, false))
	recs[100][0] = ""
	data := writeRecords(t, filepath.Join(dir, "blank.csv"), recs)
	code, _, stderr := tt(t, "train", "--data", data, "--text-col", "label", "--label-col", "text", "--out", filepath.Join(dir, "m.tt"))
	want := fmt.Sprintf("%s line 101: empty label", data)
	if code != 1 || !strings.Contains(stderr, want) || !strings.Contains(stderr, "the columns may be swapped: check that --text-col names the text column and --label-col the label column") {
		t.Errorf("exit %d, want 1 and %q with the hint:\n%s", code, want, stderr)
	}
}
