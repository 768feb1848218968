// Package audit finds the cues a trained sentence CNN (package cnn) relies
// on that look like how its data was collected rather than like the
// language of its task — a footer line, a ticket stamp, a mailing-list tag
// — and tells what the model scores without them and what to do. It needs
// no shift between the training and the held-out split: the cues may sit
// in both at the same rates.
//
// # Three questions
//
// Run answers three questions about every cue, each with its own evidence:
//
//  1. Association: does a word or phrase predict a label in the training
//     split? Every word in at least MinSupport texts is tested against
//     every label with an exact one-sided test (Fisher's exact test by
//     default, or the exact binomial test against the label's share), and
//     the words × labels tests are corrected together by the procedure of
//     Benjamini & Hochberg (1995): it bounds the share of chance words among
//     those listed, which suits a list a person reads, and every listed cue
//     must still prove itself by the model's reliance on it (Bonferroni is
//     the stricter option). Each associated word then grows into the
//     longest verbatim phrase it keeps in 80% of its occurrences (a
//     footer's word into the whole line, a stamp's into its prefix and
//     number), and, when that is the word alone, also into the form it is
//     written in, with no space, in most of them ("Re:" from "re"); a
//     square bracket grows into the bracketed groups it opens or closes (a
//     list tag "[ilug]" is one cue). Phrases claim their tokens longest
//     first, so a word inside a footer counts with the footer.
//  2. Reliance: does this model depend on it? On held-out texts that hold
//     the cue, the cue is replaced by label-neutral words (the
//     counterfactual), and, as a control, kept while the same words are
//     put at random places; both edits add the same words, so what differs
//     is the cue's doing. Several seeded draws per text; the share of
//     predictions changed, the drop of the probability of the prediction
//     and of the cue's label, the share of all predictions the cue decides,
//     each with an interval over texts (exact for the flips, the
//     bootstrap for the drops unless few texts hold the cue); exact sign
//     tests paired by text; and the filters keyed on the cue with what
//     masking them does.
//  3. Artifact-likeness: does it read like collection rather than task?
//     Signals that need no shift, each shown with its value: a fixed
//     position (the very start or end of the text), a line of its own, a
//     long verbatim span, the same neighbours every time, its shape (an
//     identifier with digits, numbers or dates, a web or e-mail address,
//     markup — an HTML tag or what stands inside one, a quoted-printable
//     code, a tag in square brackets, marks only markup is written with
//     such as "=" — or a separator run, the same unusual casing every
//     time), a label share implausibly high at high support; and, when the
//     selection half of the held-out split has one, a shift of the cue's
//     label share (question 4 of the design: strong extra evidence, one
//     signal among the others; the confirmation half takes no part in it;
//     two-sided Fisher, Benjamini–Hochberg over the candidates tested, q
//     below 0.01, so that no chance shift among hundreds makes a cue
//     artifact-like). That share took part in choosing the cue, so the
//     share shown of a shift is the confirmation half's (ConfirmedShift:
//     exact Clopper–Pearson interval, one-sided Fisher against training,
//     Holm over the cues put to the test there whose selection half shows
//     a shift, and given only for those; the training share it is tested
//     against chose the cue, so the test leans towards "lower", and the
//     sentence shown says so).
//
// # Two halves
//
// The held-out split is halved once, stratified by label and seeded. On
// the selection half the cues are measured, ranked (reliance ×
// artifact-likeness among the associated cues, ScoreFormula; the shift
// signal too is measured there) and chosen, and their filters found. On
// the confirmation half, which took no part in choosing or ranking them,
// the listed cues are measured again: its tests decide which are acted on
// (their reliance confirmed there), and the figures the story tells, the
// accuracy without the cues, the test of a filter mask and Retrain's
// comparison come from there too. So every printed p-value and interval
// is valid for the test it describes; for a cue acted on, its figures are
// those that passed the confirmation test (a new held-out file measures
// them afresh).
//
// # Lists, marks and the action
//
// Result.Ranked lists the artifact-like cues, those acted on first;
// Result.Task the cues the model relies on that read like the task, listed
// apart for a person to judge. A person's verdicts are kept in a marks file
// beside the model (Marks, MarksPath, a plain-text format of our own): a
// cue marked artifact is ranked as one and acted on when relied on, a cue
// marked task is never acted on, and a marked word the model does not know
// is an error. The Action names the cues acted on with the patterns that
// take them out of raw text (for corpus.MaskTokens and retraining, see
// Retrain), the counterfactual split (the confirmation half without them)
// with the model's accuracy there, and a filter mask only when it helps on
// the confirmation half. On a model with word weights the mask also reads
// the cues' own words as the unknown word there, and a cue no filter reads
// but the word weights carry (its words' part of its label's logit above 0
// on the selection half) is masked by its words alone; Action.Suggested
// tells whether any mask is suggested. Cues marked artifact that the
// audit does not act on are named apart (Action.Marked): retraining
// without the cues takes them out too, and the story says so. Stability merges the audits of models trained
// with several seeds.
//
// # JSON
//
// A Result marshals to one object (every field's doc comment says what it
// holds); the keys a reader needs first:
//
//	labels, train_texts, heldout_texts, selection_texts, confirmation_texts
//	test, correction, alpha, tests, cutoff, min_support   question 1's method
//	ranked[]    artifact-like cues: words, text, surface, label, grown_from,
//	            association {texts, in_label, share, per_class, p, adjusted_p},
//	            artifact_likeness, signals[] {name, value, weight, says},
//	            reliance {texts, measured, draws, flip_rate, control_flip_rate,
//	            net_flip_rate, prob_drop, label_drop, decided, p, flip_p, …}
//	            (confirmation half; reliance_selection: the same on the
//	            selection half), shift {heldout_texts, heldout_share,
//	            train_share, p, q, present} (selection half),
//	            shift_confirmed {texts, in_label, share, train_share,
//	            p_lower, holm_p, holm_family, lower} (confirmation half: the
//	            share shown; only in its Holm family), filters {keyed,
//	            ablation}, score, mark,
//	            verdict, confidence_only, pattern
//	relied_on_reads_like_the_task[]   the same fields
//	action      cues, patterns, counterfactual {accuracy, accuracy_without,
//	            cue_accuracy, cue_accuracy_without, fixed, broken, p}, mask,
//	            mask_tried, marked_cues, marked_patterns
//	artifact_formula, score_formula
//
// Intervals are objects {estimate, low, high}.
//
// # Cost
//
// Memory: the word × label counts of the training split, and for each half
// of the held-out split (at most MaxHeldout texts) the pooled units and
// winning-window starts of every filter (8 bytes × filters × texts). Time:
// one pass over the training texts, one model pass per held-out text, and
// 2 × Draws passes for every edited text (at most MaxTexts per cue and
// half, Measured cues).
package audit
