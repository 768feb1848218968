package localeenv_test

// An external test package: the package itself must not import the
// toolkit, or the toolkit would initialise first (see doc.go).

import (
	"bytes"
	"log"
	"os"
	"strings"
	"testing"

	"fyne.io/fyne/v2/lang"

	"telltale/internal/localeenv"
)

// lookupLog runs the window toolkit's own locale lookup, the one its lang
// package's init runs when the program loads (it follows every change of
// translations: here an empty English one), and returns what it logged.
func lookupLog(t *testing.T) string {
	t.Helper()
	var buf bytes.Buffer
	log.SetOutput(&buf)
	defer log.SetOutput(os.Stderr)
	if err := lang.AddTranslationsForLocale([]byte("{}"), "en"); err != nil {
		t.Fatal(err)
	}
	lang.SystemLocale()
	return buf.String()
}

// TestFixLetsTheToolkitReadCUTF8: under LANG=C.UTF-8 the toolkit's lookup
// logs an error (it parses "C" as a language tag); after Fix it does not,
// LANG reads "C", and Undo gives the old value back. Where LANGUAGE is set
// (the lookup reads it first), or the locale is a real one, nothing changes.
// (The lookup's rules: github.com/jeandeaual/go-locale, locale_unix.go.)
func TestFixLetsTheToolkitReadCUTF8(t *testing.T) {
	for _, v := range []string{"LC_ALL", "LC_MESSAGES", "LANGUAGE"} {
		t.Setenv(v, "")
		os.Unsetenv(v)
	}
	t.Setenv("LANG", "C.UTF-8")
	if got := lookupLog(t); !strings.Contains(got, "Fyne error") {
		t.Fatalf("without the fix the lookup logged %q: the check below would prove nothing", got)
	}
	name, old := localeenv.Fix()
	if name != "LANG" || old != "C.UTF-8" || os.Getenv("LANG") != "C" {
		t.Errorf("Fix changed %q from %q; LANG is now %q", name, old, os.Getenv("LANG"))
	}
	if got := lookupLog(t); got != "" {
		t.Errorf("after Fix the lookup still logged %q", got)
	}
	localeenv.SetFixed(name, old)
	localeenv.Undo()
	if os.Getenv("LANG") != "C.UTF-8" {
		t.Errorf("Undo left LANG=%q", os.Getenv("LANG"))
	}

	for _, env := range []map[string]string{{"LANG": "C.UTF-8", "LANGUAGE": "en"}, {"LANG": "de_DE.UTF-8"}, {"LC_ALL": "POSIX"}} {
		for k, v := range env {
			t.Setenv(k, v)
		}
		if name, _ := localeenv.Fix(); name != "" {
			t.Errorf("%v: Fix changed %s", env, name)
		}
		for k := range env {
			os.Unsetenv(k)
		}
	}
}
