package gui

import (
	"fmt"
	"regexp"
	"strings"
)

// intList writes indexes as "3, 9, 42".
func intList(gs []int) string {
	s := make([]string, len(gs))
	for i, g := range gs {
		s[i] = fmt.Sprint(g)
	}
	return strings.Join(s, ", ")
}

// shortList writes at most n indexes, then how many more.
func shortList(gs []int, n int) string {
	if len(gs) <= n {
		return intList(gs)
	}
	return fmt.Sprintf("%s and %d more", intList(gs[:n]), len(gs)-n)
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// oneLine folds line breaks and runs of spaces for a one-line cell.
func oneLine(s string) string {
	return strings.Join(strings.Fields(s), " ")
}

// reflow joins the lines of terminal text that were broken only to fit a
// terminal, so a word-wrapped label can lay them out: a line is joined to
// the one before it (its indentation dropped) unless it is empty, starts a
// numbered item ("2. ", "(2) "), or the one before ends a sentence or a
// lead-in (., :) or is empty. A line not joined keeps its indentation.
func reflow(s string) string {
	lines := strings.Split(s, "\n")
	var out []string
	for _, l := range lines {
		if n := len(out); n > 0 && strings.TrimSpace(l) != "" && !itemStart.MatchString(l) {
			prev := strings.TrimRight(out[n-1], " ")
			if strings.TrimSpace(prev) != "" && !strings.HasSuffix(prev, ".") && !strings.HasSuffix(prev, ":") {
				out[n-1] = prev + " " + strings.TrimLeft(l, " ")
				continue
			}
		}
		out = append(out, l)
	}
	return strings.Join(out, "\n")
}

// itemStart is a line that starts an item of a list: "2. " or "(2) ".
var itemStart = regexp.MustCompile(`^\s*(\d+\.|\(\d+\)) `)
