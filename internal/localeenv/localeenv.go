// Package localeenv runs before the window toolkit's packages initialise
// (its import path sorts first, and Go initialises independent packages in
// import-path order) and turns a "C.UTF-8" locale, which the toolkit's
// locale lookup cannot parse and reports on every start, into plain "C",
// which means the same to every program and is understood.
package localeenv

import (
	"os"
	"strings"
)

func init() {
	for _, v := range []string{"LC_ALL", "LC_MESSAGES", "LANG"} {
		val := os.Getenv(v)
		if val == "" {
			continue
		}
		if l := strings.ToUpper(val); strings.HasPrefix(l, "C.") || strings.HasPrefix(l, "POSIX.") {
			os.Setenv(v, val[:strings.IndexByte(val, '.')])
		}
		return
	}
}
