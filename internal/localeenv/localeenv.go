package localeenv

import (
	"os"
	"strings"
)

// fixed is the variable the init changed and its value before, or "".
var fixed, before string

func init() { fixed, before = Fix() }

// Fix sets the variable the toolkit's locale lookup reads from a "C.…" or
// "POSIX.…" value to "C" when the lookup could not parse it, and returns
// the variable's name and old value ("" when nothing was changed).
func Fix() (name, old string) {
	if os.Getenv("LANGUAGE") != "" {
		return "", ""
	}
	for _, v := range []string{"LC_ALL", "LC_MESSAGES", "LANG"} {
		val := os.Getenv(v)
		if val == "" {
			continue
		}
		if u := strings.ToUpper(val); strings.HasPrefix(u, "C.") || strings.HasPrefix(u, "POSIX.") {
			os.Setenv(v, "C")
			return v, val
		}
		return "", ""
	}
	return "", ""
}

// Undo gives back the value the init changed, if any.
func Undo() {
	if fixed != "" {
		os.Setenv(fixed, before)
		fixed = ""
	}
}
