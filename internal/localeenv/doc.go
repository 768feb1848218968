// Package localeenv lets the window toolkit read a "C.UTF-8" locale.
//
// The toolkit's locale lookup (fyne.io/fyne/v2/lang through
// github.com/jeandeaual/go-locale) takes the first of LC_ALL, LC_MESSAGES
// and LANG that is set, treats exactly "C" and "POSIX" as "no locale", and
// otherwise parses the part before the dot as a language tag: "C.UTF-8",
// the default of many containers and servers, gives the tag "C", which does
// not parse, and the toolkit logs an error. It looks the locale up once
// while the program loads (the lang package's init) and again whenever the
// window asks for it.
//
// The fix sets that one variable from "C.UTF-8" (or "POSIX.…") to "C",
// which every program reads the same way, and only when the lookup would
// fail: not when LANGUAGE, which the lookup prefers, is set. It is applied
// by this package's init, so that it is in place before the toolkit's own
// init runs: Go initialises, among the packages whose imports are ready, the
// one whose import path sorts first (Go 1.21 and later), and this package
// imports only os and strings while the toolkit's lang package waits for
// text/template, which sorts after "telltale/". A command that opens no
// window calls Undo, so that it runs with the environment it was given.
package localeenv
