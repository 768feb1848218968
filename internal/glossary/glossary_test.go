package glossary

import (
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the README's Glossary section from Terms")

const (
	readmeHead = "## Glossary\n"
	// The section's body is everything up to the next second-level heading.
	nextHead = "\n## "
	lead     = "The terms telltale names itself, one line each with its formula " +
		"(symbols as in `go doc telltale/internal/glossary`); the window shows the same list under Help › Glossary.\n\n"
)

// TestReadmeGlossary: the README's "Glossary" section is Markdown(), so the
// window's Help › Glossary and the README cannot drift apart.
func TestReadmeGlossary(t *testing.T) {
	path := filepath.Join("..", "..", "README.md")
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	readme := string(b)
	want := readmeHead + "\n" + lead + Markdown() + "\n"
	i := strings.Index(readme, readmeHead)
	if i < 0 {
		if *update {
			t.Fatalf("%s has no %q section to rewrite: add the heading first", path, strings.TrimSpace(readmeHead))
		}
		t.Fatalf("%s has no %q section: run go test ./internal/glossary -update after adding the heading", path, strings.TrimSpace(readmeHead))
	}
	end := len(readme)
	if j := strings.Index(readme[i+len(readmeHead):], nextHead); j >= 0 {
		end = i + len(readmeHead) + j + 1
	}
	got := readme[i:end]
	if got == want {
		return
	}
	if *update {
		if err := os.WriteFile(path, []byte(readme[:i]+want+readme[end:]), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	t.Errorf("the README's Glossary section differs from glossary.Markdown(); run go test ./internal/glossary -update\n got:\n%s\nwant:\n%s", got, want)
}

// Every term has a name, a topic of Topics and a meaning; names are unique
// and each line is one line.
func TestTermsWellFormed(t *testing.T) {
	seen := map[string]bool{}
	topics := map[string]bool{}
	for _, tp := range Topics {
		topics[tp] = true
	}
	for _, term := range Terms {
		switch {
		case term.Name == "" || term.Meaning == "":
			t.Errorf("term %+v lacks a name or a meaning", term)
		case !topics[term.Topic]:
			t.Errorf("term %q has topic %q, not one of %v", term.Name, term.Topic, Topics)
		case seen[strings.ToLower(term.Name)]:
			t.Errorf("term %q twice", term.Name)
		case strings.ContainsAny(term.Line(), "\n\t"):
			t.Errorf("term %q does not fit on one line", term.Name)
		}
		seen[strings.ToLower(term.Name)] = true
	}
	// The terms the project's guide requires (DEVELOPERS.md, One vocabulary).
	for _, name := range []string{"slot score", "family", "selectivity threshold", "selective", "negative n-gram", "stability",
		"trigger words", "suppressor words", "centred votes", "vote margin", "identified shares", "centred logit", "kept-down window",
		"occlusion", "association", "reliance", "artifact-likeness"} {
		if _, ok := Lookup(name); !ok {
			t.Errorf("the glossary lacks %q", name)
		}
	}
}
