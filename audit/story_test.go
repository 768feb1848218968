package audit

import (
	"fmt"
	"strings"
	"testing"
)

// storyOf is the story of an audit that acts on cues named words, marked
// as given ("" for none), with the retraining commands cmds (nil: none
// rendered).
func storyOf(marks []string, cmds []string) string {
	r := &Result{ConfirmationTexts: 100, Action: Action{Commands: cmds}}
	for k, mark := range marks {
		w := []string{"stamp", "footer", "tag"}[k]
		r.Ranked = append(r.Ranked, Candidate{Words: []string{w}, Text: w, Label: "spam", Verdict: VerdictActed, Mark: mark,
			Confirmed: &Reliance{Texts: 10}, Association: CueAssociation{Texts: 20}})
		r.Action.Cues = append(r.Action.Cues, w)
		r.Action.Patterns = append(r.Action.Patterns, pattern([]string{w}))
	}
	return r.Story()
}

// The story's advice on marks honours them: it asks to mark only the cues
// acted on that are not marked artifact yet, by their number in the story,
// and says so when all are.
func TestStoryMarks(t *testing.T) {
	for _, c := range []struct {
		marks []string
		want  string
	}{
		{[]string{""}, "(Mark it as artifact to keep this judgement with the model.)"},
		{[]string{"", ""}, "(Mark them as artifact to keep this judgement with the model.)"},
		{[]string{MarkArtifact}, "(You marked it as artifact: the marks file keeps this judgement with the model.)"},
		{[]string{MarkArtifact, MarkArtifact}, "(You marked them all as artifact: the marks file keeps this judgement with the model.)"},
		{[]string{MarkArtifact, ""}, "(Mark cue 2 as artifact to keep this judgement with the model; you marked cue 1 already.)"},
		{[]string{"", MarkArtifact, ""}, "(Mark cues 1 and 3 as artifact to keep this judgement with the model; you marked cue 2 already.)"},
	} {
		story := storyOf(c.marks, nil)
		if !strings.Contains(story, c.want) {
			t.Errorf("marks %q: the story lacks %q:\n%s", c.marks, c.want, story)
		}
		if strings.Count(story, "(Mark")+strings.Count(story, "(You marked") != 1 {
			t.Errorf("marks %q: not one word on the marks:\n%s", c.marks, story)
		}
	}
}

// The story shows the retraining commands the caller renders, whole and in
// order, and without them the patterns.
func TestStoryCommands(t *testing.T) {
	cmds := []string{"printf '%s\\n' '/(?i)\\bstamp\\b/' > m.cues", "telltale train --data d.csv --test t.csv --mask-tokens m.cues --out m-without.tt"}
	story := storyOf([]string{""}, cmds)
	at := strings.Index(story, "    "+cmds[0]+"\n    "+cmds[1]+"\n")
	if at < 0 {
		t.Errorf("the story lacks the commands, one a line:\n%s", story)
	}
	if strings.Contains(story, "--mask-tokens file of telltale train") {
		t.Errorf("the story describes in words what its commands do:\n%s", story)
	}
	story = storyOf([]string{""}, nil)
	if !strings.Contains(story, "    "+pattern([]string{"stamp"})+"\n") || strings.Contains(story, "telltale train --data") {
		t.Errorf("without commands the story lists the patterns and names no command line:\n%s", story)
	}
}

// The story names the first eight cues that read like the task, and every
// one marked task after them, saying so.
func TestStoryTaskMarks(t *testing.T) {
	r := &Result{}
	for k := range 10 {
		c := Candidate{Words: []string{fmt.Sprint("word", k)}, Text: fmt.Sprint("word", k), Label: "ham", Verdict: VerdictTask,
			Confirmed: &Reliance{Texts: 10}}
		if k == 9 {
			c.Mark = MarkTask
		}
		r.Task = append(r.Task, c)
	}
	story := r.Story()
	if !strings.Contains(story, "the word 'word7' (ham)") || strings.Contains(story, "'word8'") {
		t.Errorf("the story does not name the first eight cues alone:\n%s", story)
	}
	if !strings.Contains(story, "the word 'word9' (ham; you marked it task)") {
		t.Errorf("the story does not name the cue marked task:\n%s", story)
	}
}
