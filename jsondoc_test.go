package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"telltale/explain"
)

// The JSON of data, predict, explain, filters, faithfulness, mask and
// version: every key is named in README's section on it (but the keys of
// the label-keyed maps); train --json always says whether the run
// diverged; filters --json writes the --selectivity setting as
// selectivity_share, leaving "selective" to every filter's verdict.
func TestOtherJSONDocumented(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 400)
	model := filepath.Join(dir, "m.tt")
	code, js, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--json", "--quiet")
	if code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	var tr map[string]any
	if err := json.Unmarshal([]byte(js), &tr); err != nil {
		t.Fatal(err)
	}
	if d, ok := tr["diverged"]; !ok || d != false {
		t.Errorf("train --json: diverged %v (present %v), want false", d, ok)
	}
	test := filepath.Join("testdata", "demo", "test.csv")
	for _, args := range [][]string{
		{"data", "--data", filepath.Join("testdata", "demo", "train.csv"), "--test", test},
		{"predict", "--model", model, "--text", "the ferry was late"},
		{"predict", "--model", model, "--data", data},
		{"explain", "--model", model, "--text", "the ferry was late again", "--method", "ig"},
		{"explain", "--model", model, "--data", test},
		{"filters", "--model", model, "--data", data, "--top", "3"},
		{"faithfulness", "--model", model, "--test", test, "--limit", "20"},
		{"mask", "--model", model, "--filters", "1", "--out", filepath.Join(dir, "m2.tt")},
		{"version"},
	} {
		code, js, stderr := tt(t, append(args, "--json")...)
		if code != 0 {
			t.Fatalf("%s --json: exit %d: %s", args[0], code, stderr)
		}
		for _, line := range strings.Split(strings.TrimSpace(js), "\n") {
			if args[0] != "predict" && args[0] != "explain" {
				line = js // one object over several lines
			}
			checkKeysDocumented(t, args[0], []byte(line), "### The JSON of the other commands",
				"per_label", "balance", "probabilities")
			if args[0] == "filters" {
				var top map[string]any
				json.Unmarshal([]byte(line), &top)
				if _, old := top["selective"]; old || top["selectivity_share"] != 0.5 {
					t.Errorf("filters --json: top level selective %v, selectivity_share %v", top["selective"], top["selectivity_share"])
				}
			}
			if args[0] != "predict" && args[0] != "explain" {
				break
			}
		}
	}
}

// checkKeysDocumented fails for every key of the JSON raw not named in
// README's section under heading (as `key`, or `key[]` for a list); the
// keys inside the objects named by
// maps (label-keyed) are not looked at.
func checkKeysDocumented(t *testing.T, what string, raw []byte, heading string, maps ...string) {
	t.Helper()
	b, err := os.ReadFile("README.md")
	if err != nil {
		t.Fatal(err)
	}
	_, doc, ok := bytes.Cut(b, []byte(heading))
	if !ok {
		t.Fatalf("README.md has no section %q", heading)
	}
	doc, _, _ = bytes.Cut(doc, []byte("\n## "))
	doc, _, _ = bytes.Cut(doc, []byte("\n### "))
	var v any
	if err := json.Unmarshal(raw, &v); err != nil {
		t.Fatalf("%s: %v", what, err)
	}
	missing := map[string]bool{}
	var walk func(v any)
	walk = func(v any) {
		switch x := v.(type) {
		case map[string]any:
			for k, e := range x {
				if !bytes.Contains(doc, []byte("`"+k+"`")) && !bytes.Contains(doc, []byte("`"+k+"[]`")) {
					missing[k] = true
				}
				if !slices.Contains(maps, k) {
					walk(e)
				}
			}
		case []any:
			for _, e := range x {
				walk(e)
			}
		}
	}
	walk(v)
	for k := range missing {
		t.Errorf("%s --json: key %q is not in README's %q", what, k, heading)
	}
}

// TestFiltersJSONIsTheLibrarys: filters --json writes explain.Profiles as
// the library's own JSON tags name its fields, so the --selectivity
// setting has one key, selectivity_share (README "The JSON of the other
// commands"), in the command and in the library: reading the command's
// JSON into explain.Profiles and writing it again gives the same keys and
// values.
func TestFiltersJSONIsTheLibrarys(t *testing.T) {
	dir := t.TempDir()
	data := demoPart(t, dir, 300)
	model := filepath.Join(dir, "m.tt")
	if code, _, stderr := tt(t, "train", "--data", data, "--out", model, "--epochs", "1", "--dim", "8", "--maps", "4", "--quiet"); code != 0 {
		t.Fatalf("train: exit %d: %s", code, stderr)
	}
	code, js, stderr := tt(t, "filters", "--model", model, "--data", data, "--top", "3", "--selectivity", "0.6", "--json", "--quiet")
	if code != 0 {
		t.Fatalf("filters --json: exit %d: %s", code, stderr)
	}
	var p explain.Profiles
	if err := json.Unmarshal([]byte(js), &p); err != nil {
		t.Fatal(err)
	}
	if p.Selective != 0.6 {
		t.Errorf("the library reads the --selectivity setting 0.6 from filters --json as %g", p.Selective)
	}
	again, err := json.Marshal(&p)
	if err != nil {
		t.Fatal(err)
	}
	var cmd, lib map[string]any
	if err := json.Unmarshal([]byte(js), &cmd); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(again, &lib); err != nil {
		t.Fatal(err)
	}
	for k, v := range cmd {
		if k != "filters" && !reflect.DeepEqual(lib[k], v) {
			t.Errorf("key %q: %v in filters --json, %v in the library's JSON", k, v, lib[k])
		}
	}
	for k := range lib {
		if _, ok := cmd[k]; !ok {
			t.Errorf("the library's JSON has the key %q, filters --json does not", k)
		}
	}
}
