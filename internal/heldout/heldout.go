package heldout

import (
	"fmt"
	"strings"

	"telltale/corpus"
)

// Changed is the warning that the dev or test file at path (which says
// which: "dev" or "test"), a file the model was trained with, is not what
// train read there: its fingerprint got (corpus.Dataset.Fingerprint) is
// not want, the one the model records (cnn.SplitRecord.DevFingerprint or
// TestFingerprint). fix says what to do, in the caller's terms. It is ""
// when the fingerprints agree, or when want is "" (a model file written
// before fingerprints were recorded).
func Changed(which, path, want, got, fix string) string {
	if want == "" || got == want {
		return ""
	}
	return fmt.Sprintf("%s, the %s file the model was trained with, has changed since training (its texts or labels are not those train read): %s",
		path, which, fix)
}

// CuesChosen is the warning that n texts of the total evaluated on are
// the choosing half of an audit's held-out texts (cnn.Info.CuesChosenOn),
// which chose the cues the model was retrained without, or, masked, the
// mask written into it: its figures on them are not held-out figures, and
// the model may look better there than on texts that took no part. fix
// says what to do, in the caller's terms. It is "" when n is 0.
func CuesChosen(n, total int, masked bool, fix string) string {
	if n == 0 {
		return ""
	}
	what := "the cues this model was retrained without (audit --retrain)"
	if masked {
		what = "the filters and words masked in this model (audit --masked-out)"
	}
	return fmt.Sprintf("%d of these %d texts are the audit's choosing half, which chose %s: "+
		"they took part in a choice about the model, so its figures on them are not all held-out figures; %s",
		n, total, what, fix)
}

// SeedsJoined is the fix of CuesChosen's warning when audits run with
// different --seed values (seeds, ascending: cnn.ConfirmingSeed) chose on
// the texts: each seed drew its own two halves, so every confirming half
// holds texts another audit chose on, and none gives held-out figures.
// fix says what to do instead, in the caller's terms (a test file no audit
// chose on).
func SeedsJoined(seeds []uint64, fix string) string {
	flags := make([]string, len(seeds))
	for i, s := range seeds {
		flags[i] = fmt.Sprintf("--seed %d", s)
	}
	list := strings.Join(flags, " and ")
	if len(flags) > 2 {
		list = strings.Join(flags[:len(flags)-1], ", ") + " and " + flags[len(flags)-1]
	}
	return fmt.Sprintf("audits run with %s chose on different halves of these texts, so no confirming half took no part: %s", list, fix)
}

// Copies counts the texts of test that are also texts of train, or copies
// of one but for case, spacing and punctuation (corpus.CopyKey: the same
// words and numbers). telltale data counts these among its leaks, with
// texts that differ in their numbers too (corpus.NearKey), which are other
// texts to a model (another date, another departure).
func Copies(test, train *corpus.Dataset) int {
	exact := make(map[string]bool, len(train.Examples))
	near := make(map[string]bool, len(train.Examples))
	for _, e := range train.Examples {
		exact[e.Text] = true
		if k := corpus.CopyKey(e.Text); k != "" {
			near[k] = true
		}
	}
	n := 0
	for _, e := range test.Examples {
		if k := corpus.CopyKey(e.Text); exact[e.Text] || (k != "" && near[k]) {
			n++
		}
	}
	return n
}
