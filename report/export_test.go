package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

func sampleTable() *Table {
	t := &Table{Columns: []string{"index", "text", "p_spam", "idle"}}
	t.Add(0, `a "quoted", text`+"\nover two lines", 0.25, false)
	t.Add(1, "<b>markup</b> & more", math.NaN(), true)
	return t
}

func TestTableCSVRoundTrip(t *testing.T) {
	var buf bytes.Buffer
	if err := sampleTable().WriteCSV(&buf); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{
		{"index", "text", "p_spam", "idle"},
		{"0", "a \"quoted\", text\nover two lines", "0.25", "false"},
		{"1", "<b>markup</b> & more", "", "true"},
	}
	if len(recs) != len(want) {
		t.Fatalf("%d records, want %d", len(recs), len(want))
	}
	for i := range want {
		if strings.Join(recs[i], "|") != strings.Join(want[i], "|") {
			t.Errorf("record %d = %q, want %q", i, recs[i], want[i])
		}
	}
}

func TestTableJSONLKeepsTypes(t *testing.T) {
	var buf bytes.Buffer
	if err := sampleTable().WriteJSONL(&buf); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	if len(lines) != 2 {
		t.Fatalf("%d lines", len(lines))
	}
	var row map[string]any
	if err := json.Unmarshal([]byte(lines[1]), &row); err != nil {
		t.Fatal(err)
	}
	if row["index"] != 1.0 || row["p_spam"] != nil || row["idle"] != true || row["text"] != "<b>markup</b> & more" {
		t.Errorf("row = %v", row)
	}
	if !strings.HasPrefix(lines[0], `{"index":0,"text":`) {
		t.Errorf("keys are not in column order: %s", lines[0])
	}
}

func TestWriteTableFile(t *testing.T) {
	dir := t.TempDir()
	if err := WriteTableFile(filepath.Join(dir, "x.parquet"), sampleTable()); err == nil || !strings.Contains(err.Error(), ".csv or .jsonl") {
		t.Errorf("unknown extension: %v", err)
	}
	if err := WriteTableFile(filepath.Join(dir, "missing", "x.csv"), sampleTable()); err == nil {
		t.Error("no error for a missing folder")
	}
	for _, name := range []string{"x.csv", "x.jsonl"} {
		if err := WriteTableFile(filepath.Join(dir, name), sampleTable()); err != nil {
			t.Fatal(err)
		}
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 2 {
		t.Errorf("folder holds %d entries, want the two exports and no temporary file", len(ents))
	}
}

// TestExportsLoadInPandas loads both export formats with one call each of
// pandas (Debian's python3-pandas), the data-frame library the README
// promises they load into.
func TestExportsLoadInPandas(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import pandas").Run(); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("pandas is missing (apt-get install python3-pandas): %v", err)
		}
		t.Skip("SKIPPED: Debian's python3-pandas is not installed; `make test` installs it")
	}
	dir := t.TempDir()
	csvPath, jsonlPath := filepath.Join(dir, "t.csv"), filepath.Join(dir, "t.jsonl")
	for _, p := range []string{csvPath, jsonlPath} {
		if err := WriteTableFile(p, sampleTable()); err != nil {
			t.Fatal(err)
		}
	}
	script := `import sys, pandas as pd
a = pd.read_csv(sys.argv[1]); b = pd.read_json(sys.argv[2], lines=True)
assert list(a.columns) == list(b.columns) == ["index", "text", "p_spam", "idle"], (a.columns, b.columns)
assert a.shape == b.shape == (2, 4)
assert a["text"][0] == b["text"][0] == 'a "quoted", text\nover two lines'
assert a["p_spam"][0] == b["p_spam"][0] == 0.25 and pd.isna(a["p_spam"][1]) and pd.isna(b["p_spam"][1])
print("ok")`
	out, err := exec.Command(py, "-c", script, csvPath, jsonlPath).CombinedOutput()
	if err != nil || strings.TrimSpace(string(out)) != "ok" {
		t.Fatalf("pandas: %v\n%s", err, out)
	}
}
