package heldout

import "fmt"

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
