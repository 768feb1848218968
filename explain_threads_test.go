package main

import (
	"os"
	"path/filepath"
	"testing"
)

// TestExplainThreadsSameOutput: explain works on several texts at once but
// writes them in their order, so its text output, its --json lines and its
// --export file are byte for byte those of one worker (the loop's output;
// common practice, no source). Each worker fills a slot table of its own,
// whose results are the model's own bit for bit (explain's table tests).
func TestExplainThreadsSameOutput(t *testing.T) {
	model := tinyModel(t)
	dir := t.TempDir()
	data := "testdata/demo/test.csv"
	run := func(threads string, extra ...string) (string, string) {
		export := filepath.Join(dir, "shares-"+threads+".csv")
		args := append([]string{"explain", "--model", model, "--data", data, "--color", "never",
			"--threads", threads, "--export", export, "--quiet"}, extra...)
		code, out, stderr := tt(t, args...)
		if code != 0 {
			t.Fatalf("explain --threads %s %v: exit %d: %s", threads, extra, code, stderr)
		}
		b, err := os.ReadFile(export)
		if err != nil {
			t.Fatal(err)
		}
		return out, string(b)
	}
	for _, extra := range [][]string{nil, {"--json"}} {
		one, oneExport := run("1", extra...)
		if len(one) < 10000 {
			t.Fatalf("explain %v on %s wrote only %d bytes", extra, data, len(one))
		}
		for _, threads := range []string{"2", "5"} {
			many, manyExport := run(threads, extra...)
			if many != one {
				t.Errorf("explain %v: --threads %s writes other output than --threads 1", extra, threads)
			}
			if manyExport != oneExport {
				t.Errorf("explain %v: --threads %s exports another file than --threads 1", extra, threads)
			}
		}
	}
}
