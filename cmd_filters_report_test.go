package main

import (
	"context"
	"encoding/json"
	"io"
	"path/filepath"
	"testing"

	"telltale/explain"
	"telltale/report"
)

// telltale filters and telltale report give the same profiles of a model's
// filters on the same data (its training split): the same selectivity, the
// same family sample and the same families, shares and counts with their
// intervals. The report's side is built as the report command builds it
// (findTestSplit, then report.Gather with its default profile options);
// filters runs with one worker and the report with one per core, so the
// number of workers may not matter either. No outside source: the
// reference is the other command's profile. The model must have families
// with a measured share, so that the comparison holds something.
func TestFiltersAndReportProfilesAgree(t *testing.T) {
	dir := t.TempDir()
	data := filepath.Join("testdata", "demo", "train.csv")
	model := filepath.Join(dir, "m.tt")
	m := trainSmall(t, data, model)
	code, out, stderr := tt(t, "filters", "--model", model, "--data", data, "--json", "--quiet", "--threads", "1")
	if code != 0 {
		t.Fatalf("filters: exit %d: %s", code, stderr)
	}
	var cmd explain.Profiles
	if err := json.Unmarshal([]byte(out), &cmd); err != nil {
		t.Fatal(err)
	}
	es, err := findTestSplit(m, data, "", &readOptions{}, io.Discard, true)
	if err != nil {
		t.Fatal(err)
	}
	in, err := report.Gather(context.Background(), m, es.train, es.test, report.Options{SkipAudit: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := in.Profiles
	if cmd.Texts != rep.Texts || len(cmd.Filters) != len(rep.Filters) {
		t.Fatalf("filters profiled %d texts and %d filters, the report %d and %d", cmd.Texts, len(cmd.Filters), rep.Texts, len(rep.Filters))
	}
	measured := 0
	for g := range cmd.Filters {
		a, b := &cmd.Filters[g], &rep.Filters[g]
		if a.Selectivity.Above != b.Selectivity.Above || a.Selectivity.Windows != b.Selectivity.Windows ||
			a.FamilySample != b.FamilySample || a.FamilyMeasured != b.FamilyMeasured {
			t.Errorf("filter %d: filters has %d windows above the threshold (%d measured), a family sample of %d (%d measured); the report %d (%d), %d (%d)",
				g, a.Selectivity.Above, a.Selectivity.Windows, a.FamilySample, a.FamilyMeasured, b.Selectivity.Above, b.Selectivity.Windows, b.FamilySample, b.FamilyMeasured)
		}
		x, err := json.Marshal(a.Families)
		if err != nil {
			t.Fatal(err)
		}
		// The report's families through JSON as well, as filters --json
		// wrote them (an undefined share, null there, reads back as 0).
		y, err := json.Marshal(b.Families)
		if err != nil {
			t.Fatal(err)
		}
		var back []explain.Family
		if err := json.Unmarshal(y, &back); err != nil {
			t.Fatal(err)
		}
		if y, err = json.Marshal(back); err != nil {
			t.Fatal(err)
		}
		if string(x) != string(y) {
			t.Errorf("filter %d: the families differ:\nfilters %s\nreport  %s", g, x, y)
		}
		for _, f := range b.Families {
			if f.Measured > 0 {
				measured++
			}
		}
	}
	if measured == 0 {
		t.Fatal("no family with a measured share: the comparison holds nothing")
	}
}
