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
		Meaning: "how much word w at position s of filter g's window adds to the filter's activation, against padding (the zero word vector); activation = B_g + Σ_s slot scores; shown in log-odds units. The reference matters: a vector added to every word's vector, its part taken out of each filter's bias, moves the slot scores, the bias part and the token shares, but no prediction of a text at least as long as the widest filter, so only padding (texts shorter than that, and the padded ends) pins the split between bias and slot scores; read slot scores and shares as \"against padding\", as word weights are read \"against the unknown word's\"."},
	{Name: "log-odds units", Topic: "filters",
		Formula: "shown value = raw value × vote scale r_g, r_g = max over classes of OutW[c][g] − min over classes of OutW[c][g]",
		Meaning: "how a filter's activations, thresholds and slot scores are shown: the most they move the log-odds between two labels. The raw values are not shown: multiplying a filter's weights and bias by k > 0 and dividing its output weights by k changes them but no prediction; a filter whose output weights are all equal shows 0."},
	{Name: "centred votes", Topic: "filters",
		Formula: "centred vote of filter g for class c = (OutW[c][g] − mean over classes of OutW[·][g]) × the filter's highest winning activation",
		Meaning: "what the filter's highest winning window adds to each class's centred logit; the filter votes for the class with the largest. Its raw output weights are not shown: training leaves a constant added to all of them and the filter's scale free."},
	{Name: "vote margin", Topic: "filters",
		Formula: "margin = (largest output weight − second largest output weight) × the filter's highest winning activation",
		Meaning: "how far the filter's highest winning window raises its class's logit above the next class's, in log-odds."},
	{Name: "selectivity threshold", Topic: "filters",
		Formula: "on the choosing half of the texts: the lowest winning activation a with share(texts assigned the voted class | winning activation ≥ a) ≥ π + 0.5 · (1 − π), π that class's base rate",
		Meaning: "above it, a filter's winning windows come from texts the model gives the filter's class half the way from chance to always (after the purity threshold of Jacovi, Sar Shalom & Goldberg 2018)."},
	{Name: "selective", Topic: "filters",
		Formula: "on the other half of the texts, which took no part in choosing the threshold (the filter was trained on both halves): P(X ≥ in-class windows at or above the threshold), X ~ Binomial(windows at or above it, base rate), Holm-corrected over the filters, ≤ 0.05",
		Meaning: "the filter's strong windows tell its class apart better than chance on texts that took no part in choosing its threshold; a filter that is not is said to be not selective."},
	{Name: "trigger words", Topic: "filters",
		Formula: "at slot s: the words with the largest slot score(w, s, g), seen at least twice",
		Meaning: "words that raise the filter's activation most at that position."},
	{Name: "suppressor words", Topic: "filters",
		Formula: "at slot s: the words with the most negative slot score(w, s, g), seen at least twice",
		Meaning: "words that hold the filter down most at that position."},
	{Name: "negative n-gram", Topic: "filters",
		Formula: "a corpus window with B_g + Σ positive slot scores ≥ selectivity threshold > B_g + Σ slot scores; held down = − Σ negative slot scores",
		Meaning: "a window the filter would respond to but for the words at its negative slots (a negation before praise, say): what keeps the filter quiet (Jacovi, Sar Shalom & Goldberg 2018)."},
	{Name: "family", Topic: "filters",
		Formula: "a stratified sample of the choosing half's windows at or above the selectivity threshold, each weighted by the windows it stands for, clustered by slot-score vectors (weighted average linkage, cut at 0.5 × mean vector norm), the clusters of one pattern joined; share = the other half's sampled windows at or above the threshold placed in the family (nearest centroid), weighted, over all of them",
		Meaning: "one of the things a filter responds to, with its share of the windows above the threshold; its pattern names the dominant slots' words and marks the other slots *. The families are chosen on the half of the texts that chose the threshold and their shares measured on the other half, with a 95% interval (exact, Clopper–Pearson in the sample's effective size, where a family or the rest holds fewer than 10 measured windows)."},
	{Name: "stability", Topic: "filters",
		Formula: "mean over 50 resamples of the choosing half's sample of the share of a family's pairs of n-grams present there that cluster together again (pairs weighted by the product of their weights; clusters of one pattern joined)",
		Meaning: "how far a family is a fact of the data rather than of the sample; near 1, its n-grams always fall together. Measured on the half that chose the families; the interval is the Monte Carlo error of 50 resamples, not the sampling error of the texts."},
	{Name: "identified shares", Topic: "explanations",
		Formula: "Σ_c v_c·logit[c] = Σ_c v_c·OutB[c] + Σ over fired filters g of (Σ_c v_c·OutW[c][g])·(B_g + Σ_s slot scores of its winning window) + (1/N)·Σ over the N words t of Σ_c v_c·Wide[x_t][c] (models with the wide path); v = e_ŷ − e_r for the log-odds log p(ŷ)/p(r), r the runner-up, v = e_c − 1/C for class c's centred logit; token i's share is the sum of the terms of its slot scores plus its word part Σ_c v_c·(Wide[x_i][c] − Wide[UNK][c])/N",
		Meaning: "each token's part of the log-odds of the predicted label against the runner-up (or of a label's centred logit), with nothing left over; a token's share of one label's own logit is never shown, since training does not pin it down; nor is a word's own wide weight, only its difference from the unknown word's."},
	{Name: "centred logit", Topic: "explanations",
		Formula: "logit[c] − mean over classes of logit = log p(c) − mean over classes of log p",
		Meaning: "the per-label view: how much the text favours label c over the average label."},
	{Name: "bias parts", Topic: "explanations",
		Formula: "output bias = Σ_c v_c·OutB[c], plus the wide path's unknown-word weight Σ_c v_c·Wide[UNK][c] (models with the wide path); bias part of fired filter g = (Σ_c v_c·OutW[c][g])·B_g",
		Meaning: "the parts of the split that no token carries."},
	{Name: "occlusion", Topic: "explanations",
		Formula: "p(ŷ) − p(ŷ | token i replaced by padding)",
		Meaning: "how much the predicted label's probability falls without the token, measured by re-running the model."},
	{Name: "kept-down window", Topic: "explanations",
		Formula: "a window of filter g with B_g + Σ positive slot scores > h_g; estimate = (OutW[ŷ][g] − OutW[r][g]) · (B_g + Σ positive slot scores − h_g)",
		Meaning: "a window that would have won its filter but for the tokens at its negative slots; replacing those tokens by padding and re-running the model measures the change, split exactly into this filter's part (the estimate's quantity), the other filters' and the word weights'."},
	{Name: "cue", Topic: "cue audit",
		Formula: "",
		Meaning: "a word or phrase that predicts a label in the training split: a footer line, a ticket stamp, a mailing-list tag, or a word of the task; <number> in a cue matches any number."},
	{Name: "association", Topic: "cue audit",
		Formula: "one-sided Fisher exact test of the cue's training texts in its label (or, on request, the exact binomial test against the label's share), corrected over every word × label tested (Benjamini & Hochberg 1995, which bounds the share of chance findings; Bonferroni, which bounds the chance of any, on request)",
		Meaning: "whether a cue predicts a label in the training split; a word grows into the longest phrase it keeps in 80% of its occurrences."},
	{Name: "reliance", Topic: "cue audit",
		Formula: "mean over test texts holding the cue of p(label | control) − p(label | cue replaced by neutral words), 95% interval over texts (percentile bootstrap; where fewer than 10 texts differ from the most common value, as for any cue measured on 10 texts or fewer, an exact one covering at least 95%: Clopper–Pearson where all are equal, else the betting interval of Waudby-Smith & Ramdas 2024, as for every flip rate)",
		Meaning: "how much this model depends on the cue; the control keeps the cue and puts the same neutral words elsewhere."},
	{Name: "neutral words", Topic: "cue audit",
		Formula: "the 50 most common words of letters in at least 20 training texts, in no cue, whose label shares differ from the training split's by a total variation distance ≤ 0.05",
		Meaning: "the words a cue is replaced by when its reliance is measured."},
	{Name: "predictions changed", Topic: "cue audit",
		Formula: "edits that change the prediction / edits, over the texts holding the cue, beside the same share for the control (same words elsewhere)",
		Meaning: "how often replacing the cue changes the model's label."},
	{Name: "decides", Topic: "cue audit",
		Formula: "Σ over texts holding the cue of (share of draws whose prediction changes with the cue replaced − with the control) / texts of the confirming half",
		Meaning: "the share of all predictions the cue decides."},
	{Name: "artifact-likeness", Topic: "cue audit",
		Formula: "1 − Π (1 − weight × value) over the signals (edge, line, span, context, code, number, address, markup, casing, purity, shift), each value in [0, 1], each weight set by hand",
		Meaning: "a rule's score of how much a cue reads like how the data was collected rather than like the task, not a probability: its weights are set by hand, not fitted; 0.5 or more is artifact-like. Signals: edge (at the very start or end of the text), line (a line of its own), span (a long verbatim span), context (the same neighbours every time), code (an identifier with digits), number (only numbers or dates), address (a web or e-mail address), markup (an HTML tag, a quoted-printable code, a header line, a tag in brackets, or a run of one mark), casing (always the same unusual casing), purity (one label nearly always, at high support), shift (its label share differs in the choosing half of the held-out texts)."},
	{Name: "choosing half", Topic: "cue audit",
		Formula: "the test split halved at random, stratified by label: the choosing half and the confirming half",
		Meaning: "cues are ranked and chosen on the choosing half; every figure shown and the decision to act come from the confirming half, which took no part in choosing: for a cue acted on, its figures are those that passed the confirming half's test."},
	{Name: "acted on", Topic: "cue audit",
		Formula: "artifact-like, relied on in the choosing half and confirmed in the confirming half (the probability drop: exact sign test, Benjamini–Hochberg over the cues tested, and its interval above 0; the flips: the net share of predictions changed with its exact interval above 0, or the exact sign test of texts flipping more against fewer at p ≤ 0.025)",
		Meaning: "the cues the audit tells you to remove; ranked first, then by reliance × artifact-likeness."},
	{Name: "reads like the task", Topic: "cue audit",
		Formula: "artifact-likeness below 0.5 (or marked task), relied on in the choosing half and confirmed in the confirming half (as a cue acted on)",
		Meaning: "listed apart for you to judge and never acted on; mark any that is an artifact."},
	{Name: "without the cues", Topic: "cue audit",
		Formula: "the confirming half with every occurrence of the cues acted on deleted",
		Meaning: "what the model scores where the artifacts are absent."},
	{Name: "marks", Topic: "cue audit",
		Formula: "",
		Meaning: "your verdicts on cues, artifact or task, kept in a file beside the model (model.marks) that the window, the command line and the report read and write."},
	{Name: "stable cue", Topic: "cue audit",
		Formula: "acted on in at least K of the audits of models trained with the same recipe and other seeds",
		Meaning: "a cue that is a fact of the data and the recipe rather than of one seed."},
	{Name: "suggested mask", Topic: "cue audit",
		Formula: "the filters that read the cues acted on (and, in a model with word weights, the cues' own words, read as the unknown word), chosen on the choosing half; suggested only when the edit raises accuracy on the confirming half (one-sided exact McNemar p < 0.05)",
		Meaning: "a model edit without retraining, offered only when data that took no part in choosing it supports it."},
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
