package audit

import (
	"strings"
	"testing"
)

// A mark changes how a cue is treated, never what was measured: a cue
// marked artifact keeps its measured artifact-likeness, counts as
// artifact-like, weighs 1 in the ranking, and the story gives the mark
// and the measured signals both (common practice, no source: a person's
// verdict is shown beside the evidence, not in its place).
func TestMarkKeepsTheMeasuredFigures(t *testing.T) {
	line := Signal{Name: SignalLine, Value: 1, Weight: 0.6, Says: "it is a whole line of its own in 100% of its occurrences"}
	c := Candidate{Words: []string{"footer"}, Signals: []Signal{line}}
	c.ArtifactLikeness = artifactScore(c.Signals)
	measured := c.ArtifactLikeness

	c.Mark = MarkArtifact
	if !c.ArtifactLike() || artifactWeight(&c) != 1 {
		t.Errorf("marked artifact: artifact-like %v, weight %v; want true and 1", c.ArtifactLike(), artifactWeight(&c))
	}
	if c.ArtifactLikeness != measured {
		t.Errorf("the mark changed the measured artifact-likeness %v to %v", measured, c.ArtifactLikeness)
	}
	if got, want := c.why(), "you marked it as an artifact, and "+line.Says; got != want {
		t.Errorf("why: %q, want %q", got, want)
	}

	c.Signals = nil
	if got := c.why(); got != "you marked it as an artifact" {
		t.Errorf("why without signals: %q", got)
	}
	c.Mark = MarkTask
	c.ArtifactLikeness = 0.99
	if c.ArtifactLike() || artifactWeight(&c) != 0.99 {
		t.Errorf("marked task: artifact-like %v, weight %v; want false and the measured 0.99", c.ArtifactLike(), artifactWeight(&c))
	}
	if got := (&Candidate{ArtifactLikeness: 0.7}).why(); !strings.Contains(got, "signals together pass") {
		t.Errorf("unmarked without strong signals: %q", got)
	}
}
