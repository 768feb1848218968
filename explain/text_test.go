package explain

import (
	"bytes"
	"context"
	"errors"
	"strings"
	"testing"
)

func goldenProfiles(t *testing.T) *Profiles {
	t.Helper()
	m, index := goldenModel()
	var all [][]int32
	for _, s := range []string{"the ferry was late", "the crew was not friendly", "great trip thanks crew", "never again", "the trip was great", "not great the ferry was late again"} {
		_, ids := tokensOf(s, index)
		all = append(all, ids)
	}
	prof, err := Profile(context.Background(), m, all, []int{0, 0, 1, 0, 1, 0}, ProfileOptions{TopK: 3, MinCount: 1})
	if err != nil {
		t.Fatal(err)
	}
	return prof
}

func TestWriteTextGolden(t *testing.T) {
	prof := goldenProfiles(t)
	var b bytes.Buffer
	if err := prof.WriteText(&b, 2); err != nil {
		t.Fatal(err)
	}
	golden(t, "profiles.golden.txt", b.Bytes())
	// Every filter and every shown n-gram appears.
	for _, f := range prof.Filters {
		if !strings.Contains(b.String(), "\nfilter "+itoa(f.Filter)+" ") {
			t.Fatalf("filter %d missing", f.Filter)
		}
	}
}

type failWriter struct{ n int }

var errFull = errors.New("disk full")

func (f *failWriter) Write(p []byte) (int, error) {
	if f.n--; f.n < 0 {
		return 0, errFull
	}
	return len(p), nil
}

func TestWriteTextReportsWriteError(t *testing.T) {
	prof := goldenProfiles(t)
	for _, n := range []int{0, 3} {
		if err := prof.WriteText(&failWriter{n: n}, 0); !errors.Is(err, errFull) {
			t.Fatalf("after %d writes: error %v, want %v", n, err, errFull)
		}
	}
}
