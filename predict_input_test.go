package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestPredictStdinLinesPair: predict on standard input gives one output
// line per input line, a blank line an empty one (or a blank object with
// --json, which numbers every line); a byte order mark is not part of the
// first text; invalid UTF-8 is replaced with one warning naming its line.
func TestPredictStdinLinesPair(t *testing.T) {
	model := tinyModel(t)
	in := "\xef\xbb\xbfthe ferry was late\n\n   \ncaf\xe9 was closed\nbad \xff again\nlovely crew"
	code, out, stderr := runCmd(t, in, "predict", "--model", model)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
	if len(lines) != 6 || lines[1] != "" || lines[2] != "" {
		t.Fatalf("%d output lines for 6 input lines, want pairs:\n%s", len(lines), out)
	}
	if !strings.HasSuffix(lines[0], "\tthe ferry was late") {
		t.Errorf("first line %q: the byte order mark was kept", lines[0])
	}
	want := "warning: standard input line 4: invalid UTF-8 replaced by U+FFFD"
	if strings.Count(stderr, "invalid UTF-8") != 1 || !strings.Contains(stderr, want) {
		t.Errorf("stderr %q: want one warning %q", stderr, want)
	}
	if _, _, quiet := runCmd(t, in, "predict", "--model", model, "--quiet"); quiet != "" {
		t.Errorf("--quiet: stderr %q", quiet)
	}
	code, out, stderr = runCmd(t, in, "predict", "--model", model, "--json")
	if code != 0 {
		t.Fatalf("--json: exit %d: %s", code, stderr)
	}
	for i, l := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
		var v struct {
			Line  int    `json:"line"`
			Text  string `json:"text"`
			Blank bool   `json:"blank"`
		}
		if err := json.Unmarshal([]byte(l), &v); err != nil {
			t.Fatalf("line %d %q: %v", i+1, l, err)
		}
		if v.Line != i+1 || v.Blank != (i == 1 || i == 2) || i == 0 && v.Text != "the ferry was late" {
			t.Errorf("output line %d: %q", i+1, l)
		}
	}
}

// TestPredictExportLineAndGold: --export names each text by the line of
// --data where its record starts, as --json does, and keeps the file's
// label as gold.
func TestPredictExportLineAndGold(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	data := filepath.Join(dir, "d.csv")
	body := "text,label\nthe ferry was late,complaint\n\"a text over\ntwo lines\",praise\nlovely crew,praise\n"
	if err := os.WriteFile(data, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	export := filepath.Join(dir, "p.csv")
	code, out, stderr := runCmd(t, "", "predict", "--model", model, "--data", data, "--export", export, "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var jsonLines []int
	for _, l := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
		var v struct{ Line int }
		if err := json.Unmarshal([]byte(l), &v); err != nil {
			t.Fatal(err)
		}
		jsonLines = append(jsonLines, v.Line)
	}
	rows := readRecords(t, export)
	if strings.Join(rows[0][:4], ",") != "line,text,gold,predicted" {
		t.Fatalf("header %q", rows[0])
	}
	wantLines, wantGold := []int{2, 3, 5}, []string{"complaint", "praise", "praise"}
	if len(rows) != 4 || len(jsonLines) != 3 {
		t.Fatalf("%d rows, %d JSON lines, want 3 each", len(rows)-1, len(jsonLines))
	}
	for i, r := range rows[1:] {
		if r[0] != strconv.Itoa(wantLines[i]) || jsonLines[i] != wantLines[i] || r[2] != wantGold[i] {
			t.Errorf("row %d: line %s, JSON line %d, gold %q; want line %d, gold %q", i+1, r[0], jsonLines[i], r[2], wantLines[i], wantGold[i])
		}
	}
}
