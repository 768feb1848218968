package main

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"strings"
	"syscall"
	"testing"
)

// TestForceQuitEndsWithTheSignalsCode: a window that does not close after
// SIGTERM is ended by forceQuit with exit code 128 + 15 (the shell's
// convention for a process ended by a signal; common practice, no source),
// after writing every goroutine's stack. It runs in a child process, since
// it exits.
func TestForceQuitEndsWithTheSignalsCode(t *testing.T) {
	if os.Getenv("TELLTALE_FORCEQUIT_CHILD") == "1" {
		ctx, cancel := context.WithCancelCause(context.Background())
		cancel(signalled{syscall.SIGTERM})
		forceQuit(ctx, os.Stderr)
		return // not reached
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestForceQuitEndsWithTheSignalsCode$")
	cmd.Env = append(os.Environ(), "TELLTALE_FORCEQUIT_CHILD=1")
	out, err := cmd.CombinedOutput()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != 128+int(syscall.SIGTERM) {
		t.Fatalf("child: %v, want exit code %d\n%s", err, 128+int(syscall.SIGTERM), out)
	}
	for _, want := range []string{"the window did not close within 15s of the signal", "goroutine ", "forceQuit"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("child's output lacks %q:\n%.2000s", want, out)
		}
	}
}
