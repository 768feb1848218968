// Package version is telltale's version: the release number, and the
// source revision the binary was built from when the build recorded one.
package version

import (
	"runtime/debug"
	"sync"
)

// Release is the version of telltale.
const Release = "0.2.0"

var revision = sync.OnceValue(func() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return ""
	}
	rev, dirty := "", false
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	if rev != "" && dirty {
		rev += "+changes"
	}
	return rev
})

// String is the release with the source revision when known, e.g.
// "0.2.0 (a1b2c3d4e5f6)".
func String() string {
	if r := revision(); r != "" {
		return Release + " (" + r + ")"
	}
	return Release
}
