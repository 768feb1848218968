package glossary

import (
	"fmt"
	"strings"
)

// Term is one entry of the glossary.
type Term struct {
	Name string // as the window and the README write it
	// Formula is how the number is made, in the symbols of the package
	// documentation; "" for a term that names a set rather than a number.
	Formula string
	// Meaning says in one sentence what it tells a user.
	Meaning string
	// Topic groups the terms: "filters", "explanations" or "cue audit".
	Topic string
}

// Line is the term on one line: its name, its meaning and its formula.
func (t Term) Line() string {
	if t.Formula == "" {
		return t.Name + ": " + t.Meaning
	}
	return t.Name + ": " + strings.TrimSuffix(t.Meaning, ".") + " (" + t.Formula + ")."
}

// Topics lists the topics of Terms in the order they are shown.
var Topics = []string{"filters", "explanations", "cue audit"}

// Terms are the glossary, by topic, in reading order.
var Terms = []Term{
	{Name: "slot score", Topic: "filters",
		Formula: "slot score(w, s, g) = Emb[w] · W_g[s]",
		Meaning: "how much word w at position s of filter g's window adds to the filter's activation; activation = B_g + Σ_s slot scores."},
	{Name: "votes", Topic: "filters",
		Formula: "votes of filter g = OutW[·][g]",
		Meaning: "what one unit of the filter's activation adds to each class's logit; the filter votes for the class with the largest."},
	{Name: "vote margin", Topic: "filters",
		Formula: "margin = largest vote − second largest vote",
		Meaning: "how clearly the filter takes one class's side."},
	{Name: "purity threshold", Topic: "filters",
		Formula: "lowest activation a with share(texts assigned the voted class | winning activation ≥ a) ≥ 0.5",
		Meaning: "above it, a filter's winning windows mostly come from texts the model gives the filter's class (Jacovi, Sar Shalom & Goldberg 2018)."},
	{Name: "idle", Topic: "filters",
		Formula: "windows at or above the purity threshold < max(5, 0.001 × texts)",
		Meaning: "the filter rarely fires strongly; masked filters are idle too."},
	{Name: "trigger words", Topic: "filters",
		Formula: "at slot s: the words with the largest slot score(w, s, g), seen at least twice",
		Meaning: "words that raise the filter's activation most at that position."},
	{Name: "suppressor words", Topic: "filters",
		Formula: "at slot s: the words with the most negative slot score(w, s, g), seen at least twice",
		Meaning: "words that hold the filter down most at that position."},
	{Name: "family", Topic: "filters",
		Formula: "n-grams above the purity threshold clustered by their slot-score vectors (average linkage, cut at 0.5 × mean vector norm)",
		Meaning: "one of the things a filter responds to; its pattern names the dominant slots' words and marks the other slots *."},
	{Name: "exact share", Topic: "explanations",
		Formula: "share[i][c] = Σ over fired filters g whose winning window holds token i of OutW[c][g] · slot score(x_i, i − start_g, g); logit[c] = bias part[c] + Σ_i share[i][c]",
		Meaning: "token i's part of class c's logit, with nothing left over."},
	{Name: "bias part", Topic: "explanations",
		Formula: "bias part[c] = OutB[c] + Σ over fired filters g of OutW[c][g] · B_g",
		Meaning: "the part of the logit no token carries."},
	{Name: "occlusion", Topic: "explanations",
		Formula: "p(ŷ) − p(ŷ | token i replaced by padding)",
		Meaning: "how much the predicted label's probability falls without the token, measured by re-running the model."},
	{Name: "flagged word", Topic: "cue audit",
		Formula: "z = (p̂(label | word) − p0) / sqrt(p0 (1 − p0) / n) above the Bonferroni-corrected normal quantile, n = training texts with the word, p0 = the label's share",
		Meaning: "a word that predicts one label by itself in the training split (z test of Gardner et al. 2021)."},
	{Name: "flagged share", Topic: "cue audit",
		Formula: "Σ slot mass on flagged words / Σ slot mass, over the filter's training windows at or above its purity threshold; slot mass = max(0, slot score)",
		Meaning: "how much of what drives the filter is flagged words."},
	{Name: "cue words", Topic: "cue audit",
		Formula: "",
		Meaning: "the flagged words carrying most of a filter's slot mass; the interventions act on them."},
	{Name: "push", Topic: "cue audit",
		Formula: "mean of p(cue label) − p(cue label | filter masked) over the test texts holding a cue word",
		Meaning: "how hard the filter pulls toward its cue's label where the cue is; breaks ties."},
	{Name: "conflict share", Topic: "cue audit",
		Formula: "test texts with a cue word whose gold label is not the cue's / test texts with a cue word",
		Meaning: "how often the cue points the wrong way."},
	{Name: "conflict gain", Topic: "cue audit",
		Formula: "mean of p(gold | filter masked) − p(gold) over the cue-conflicting test texts",
		Meaning: "how much masking the filter helps where the cue misleads."},
	{Name: "harm", Topic: "cue audit",
		Formula: "harm = conflict share × conflict gain",
		Meaning: "the filter's cost on the test texts that hold its cue."},
	{Name: "suspicion score", Topic: "cue audit",
		Formula: "score = flagged share × max(0, harm)",
		Meaning: "ranks the filters that key on flagged words and cost accuracy where those words mislead."},
	{Name: "cue group", Topic: "cue audit",
		Formula: "flagged words of one label whose training texts overlap with Jaccard |A∩B| / |A∪B| ≥ 0.8, with the filters keyed on them",
		Meaning: "one artifact of how the data was collected, and the filters that learned it; its score is the suspicion score with all its filters masked together."},
	{Name: "strongest filters", Topic: "cue audit",
		Formula: "the shortest prefix of a group's filters (highest score first) whose joint masking gives the best test accuracy",
		Meaning: "the smallest mask that does the group's work; chosen on the test split, so confirm it on other data."},
	{Name: "suggested mask", Topic: "cue audit",
		Formula: "the strongest filters of each of the first five groups with a positive score whose masking raises test accuracy (one-sided exact McNemar p < 0.05) and accuracy on its cue-conflicting texts",
		Meaning: "what the audit proposes to mask without retraining; chosen on the test split, so confirm it on other data."},
	{Name: "flip rate", Topic: "cue audit",
		Formula: "flips / (texts × draws), cue words replaced by label-neutral words of similar frequency",
		Meaning: "how often swapping the cue words changes the prediction; the control puts the same words at random positions."},
}

// Markdown is the README's glossary section body: one bullet per term,
// grouped by topic.
func Markdown() string {
	var b strings.Builder
	for _, topic := range Topics {
		fmt.Fprintf(&b, "**%s**\n\n", capitalize(topic))
		for _, t := range Terms {
			if t.Topic != topic {
				continue
			}
			if t.Formula == "" {
				fmt.Fprintf(&b, "- *%s*: %s\n", t.Name, t.Meaning)
			} else {
				fmt.Fprintf(&b, "- *%s*: %s `%s`\n", t.Name, t.Meaning, t.Formula)
			}
		}
		b.WriteString("\n")
	}
	return strings.TrimSuffix(b.String(), "\n")
}

func capitalize(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// Lookup returns the term named name (case-insensitive) and whether it exists.
func Lookup(name string) (Term, bool) {
	for _, t := range Terms {
		if strings.EqualFold(t.Name, name) {
			return t, true
		}
	}
	return Term{}, false
}
