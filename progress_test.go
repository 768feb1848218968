package main

import "testing"

// The progress line of filters gives the total when the texts are held
// (the training split) and says the count is partial when they are
// streamed.
func TestProgressFiltersNote(t *testing.T) {
	cases := []struct {
		done, total int
		want        string
	}{
		{768, 3600, "profiling filters: 768 of 3600 texts"},
		{1, 1, "profiling filters: 1 of 1 text"},
		{768, 0, "profiling filters: 768 texts so far"},
	}
	for _, c := range cases {
		if got := profilingNote(c.done, c.total); got != c.want {
			t.Errorf("profilingNote(%d, %d) = %q, want %q", c.done, c.total, got, c.want)
		}
	}
}
