package main

import (
	"os"
	"os/exec"
	"strings"
	"testing"
)

// TestTrainShareCheckedFirst: a -train-share out of (0, 1] is refused
// before any corpus is read: given with a corpus that cannot be loaded (an
// unknown name), the message is the share's, not the corpus's. The test
// runs main in a child process of the test binary (main exits through
// log.Fatal).
func TestTrainShareCheckedFirst(t *testing.T) {
	if os.Getenv("RECIPESEARCH_MAIN") == "1" {
		os.Args = []string{"recipesearch", "-corpus", "no-such-corpus", "-train-share", "0"}
		main()
		return
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestTrainShareCheckedFirst$")
	cmd.Env = append(os.Environ(), "RECIPESEARCH_MAIN=1")
	out, err := cmd.CombinedOutput()
	if err == nil || !strings.Contains(string(out), "-train-share 0: give a share in (0, 1]") {
		t.Errorf("exit %v, output %q: want the share refused first", err, out)
	}
}
