package main

import (
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"telltale/internal/testref"
)

// TestEvalExportLines: eval's --export names each text by the line of its
// file where it starts, as predict's --export and --json do: the columns
// begin line, text, gold, predicted, and every row's line and gold label
// are those of its text in the file the texts came from (--data for its
// test split, or --test), by Python's csv module: a record starts on the
// line after the one the record before it ends on (reader.line_num; some
// demo records span two lines). Reference: Python's csv module, reading
// the files independently of the tool.
func TestEvalExportLines(t *testing.T) {
	testref.RequirePython(t)
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	trainSmall(t, data, model)
	for _, c := range []struct{ name, source string }{
		{"test split of --data", data},
		{"--test file", filepath.Join("testdata", "demo", "test.csv")},
	} {
		exp := filepath.Join(dir, "preds.csv")
		args := []string{"eval", "--model", model, "--data", data, "--export", exp, "--quiet"}
		if c.source != data {
			args = []string{"eval", "--model", model, "--test", c.source, "--export", exp, "--quiet"}
		}
		if code, _, stderr := tt(t, args...); code != 0 {
			t.Fatalf("%s: exit %d: %s", c.name, code, stderr)
		}
		// The script prints the number of rows checked, or fails naming the
		// first row whose line or gold label disagrees with the file.
		script := `
import csv, sys
src, exp = sys.argv[1], sys.argv[2]
where = {}
with open(src, newline="", encoding="utf-8") as f:
    r = csv.reader(f)
    head = next(r)
    ti, li = head.index("text"), head.index("label")
    start = r.line_num + 1
    for rec in r:
        if rec:
            where.setdefault(rec[ti], []).append((start, rec[li]))
        start = r.line_num + 1
with open(exp, newline="", encoding="utf-8") as f:
    r = csv.reader(f)
    head = next(r)
    assert head[:4] == ["line", "text", "gold", "predicted"], head
    n = 0
    for rec in r:
        if (int(rec[0]), rec[2]) not in where.get(rec[1], []):
            sys.exit("row %d: line %s, gold %s not where the file has the text: %r" % (n, rec[0], rec[2], where.get(rec[1])))
        n += 1
print(n)
`
		out, err := exec.Command(testref.Python, "-c", script, c.source, exp).CombinedOutput()
		if err != nil {
			t.Errorf("%s: %v: %s", c.name, err, out)
			continue
		}
		if n := strings.TrimSpace(string(out)); n == "0" {
			t.Errorf("%s: the export has no rows", c.name)
		}
	}
}
