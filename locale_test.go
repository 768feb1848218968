package main

import (
	"errors"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// TestCUTF8StartsQuietly: under LANG=C.UTF-8, the default of many servers
// and containers, the real binary starts without the window toolkit's
// locale error, which its locale lookup logs while the program loads
// (internal/localeenv): for a command, for the window's help, and for the
// window itself up to the point where it finds no display.
func TestCUTF8StartsQuietly(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary; skipped with -short")
	}
	bin := buildBinary(t)
	var env []string
	for _, kv := range os.Environ() {
		switch strings.SplitN(kv, "=", 2)[0] {
		case "LANG", "LC_ALL", "LC_MESSAGES", "LANGUAGE", "DISPLAY", "WAYLAND_DISPLAY":
		default:
			env = append(env, kv)
		}
	}
	env = append(env, "LANG=C.UTF-8")
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"version"}, 0, ""},
		{[]string{"gui", "--help"}, 0, ""},
		{[]string{"gui"}, 1, "no display to open a window on"},
	} {
		cmd := exec.Command(bin, c.args...)
		cmd.Env = env
		var stderr strings.Builder
		cmd.Stderr = &stderr
		err := cmd.Run()
		code := 0
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			code = ee.ExitCode()
		} else if err != nil {
			t.Fatal(err)
		}
		if code != c.code || strings.Contains(stderr.String(), "Fyne error") || !strings.Contains(stderr.String(), c.want) {
			t.Errorf("LANG=C.UTF-8 telltale %s: exit %d, stderr %q; want exit %d, %q and no toolkit error", strings.Join(c.args, " "), code, stderr.String(), c.code, c.want)
		}
	}
}
