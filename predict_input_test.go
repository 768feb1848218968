package main

import (
	"encoding/json"
	"maps"
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

// TestStdinLongLinesCut: a line of standard input over --max-text-bytes is
// cut to it at a character's start with a warning naming the line, the
// limit and the fix, as --data cuts its texts — the same cut text, the
// same warning words and the same probabilities as the same text read
// from a .jsonl file; --quiet silences the warning. Reference: the cut
// worked out here (150 two-byte characters, cut at 101 bytes, keep 50);
// the default limit (1 MiB) cuts a 6 MB line.
func TestStdinLongLinesCut(t *testing.T) {
	model := tinyModel(t)
	long := strings.Repeat("é", 150)
	in := "the ferry was late\n" + long + "\n"
	code, out, stderr := runCmd(t, in, "predict", "--model", model, "--json", "--max-text-bytes", "101")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	want := "warning: standard input line 2: text of 300 bytes truncated to 101 bytes (raise --max-text-bytes to keep more)"
	if !strings.Contains(stderr, want) || strings.Count(stderr, "warning:") != 1 {
		t.Errorf("stderr %q: want the one warning %q", stderr, want)
	}
	lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
	var v struct {
		Text          string             `json:"text"`
		Probabilities map[string]float64 `json:"probabilities"`
	}
	if len(lines) != 2 || json.Unmarshal([]byte(lines[1]), &v) != nil || v.Text != strings.Repeat("é", 50) {
		t.Fatalf("the long line's output %q, want its first 50 characters", out)
	}
	data := filepath.Join(t.TempDir(), "long.jsonl")
	if err := os.WriteFile(data, []byte(`{"text":"`+long+`"}`+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, fromFile, fileErr := runCmd(t, "", "predict", "--model", model, "--json", "--max-text-bytes", "101", "--data", data)
	var f struct {
		Text          string             `json:"text"`
		Probabilities map[string]float64 `json:"probabilities"`
	}
	if code != 0 || json.Unmarshal([]byte(fromFile), &f) != nil || f.Text != v.Text || !maps.Equal(f.Probabilities, v.Probabilities) {
		t.Errorf("--data cuts the same text otherwise: %s (stdin: %s)", fromFile, lines[1])
	}
	if !strings.Contains(fileErr, "text of 300 bytes truncated to 101 bytes (raise --max-text-bytes to keep more)") {
		t.Errorf("--data's warning %q is worded otherwise than standard input's", fileErr)
	}
	if _, _, quiet := runCmd(t, in, "predict", "--model", model, "--max-text-bytes", "101", "--quiet"); quiet != "" {
		t.Errorf("--quiet: stderr %q", quiet)
	}
	big := "short\n" + strings.Repeat("the ferry was late ", 315_789) + "\n" // line 2: 19 × 315,789 = 5,999,991 bytes
	code, _, stderr = runCmd(t, big, "predict", "--model", model)
	if want := "warning: standard input line 2: text of 5999991 bytes truncated to 1048576 bytes (raise --max-text-bytes to keep more)"; code != 0 || !strings.Contains(stderr, want) {
		t.Errorf("a 6 MB line: exit %d, stderr %q; want %q", code, stderr, want)
	}
	code, _, stderr = runCmd(t, in, "explain", "--model", model, "--max-text-bytes", "101")
	if code != 0 || !strings.Contains(stderr, "warning: standard input line 2: text of 300 bytes truncated to 101 bytes") {
		t.Errorf("explain: exit %d, stderr %q: want the same warning", code, stderr)
	}
}
