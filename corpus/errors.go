package corpus

import (
	"errors"
	"fmt"
	"strings"
)

// Sentinel errors. Every error returned for bad input wraps exactly one of
// them, so callers can test the kind with errors.Is while showing the full
// message (which names the file, the line and the fix) to the user.
var (
	// ErrFormat: the file is not well-formed for its format (quoting, JSON
	// syntax, field count, wrong delimiter, unknown format).
	ErrFormat = errors.New("corpus: malformed input")
	// ErrColumn: the text or label column is missing or cannot be chosen.
	ErrColumn = errors.New("corpus: text or label column not found")
	// ErrEmpty: the file or folder holds no usable examples.
	ErrEmpty = errors.New("corpus: no examples")
	// ErrEncoding: the bytes are not UTF-8 text (invalid sequences, NUL bytes,
	// UTF-16).
	ErrEncoding = errors.New("corpus: not UTF-8 text")
	// ErrLabel: an empty label, a single label, or a label unknown to a
	// label set.
	ErrLabel = errors.New("corpus: bad label")
	// ErrTooLong: a record is longer than the hard record limit.
	ErrTooLong = errors.New("corpus: record too long")
)

// Warning is a problem that did not stop reading (an empty text that was
// skipped, a text that was truncated, a file that was ignored).
type Warning struct {
	Path    string
	Line    int // 1-based; 0 when the warning is about a whole file
	Message string
}

// String formats the warning like an error message: "corpus: path line N: message".
func (w Warning) String() string {
	if w.Line > 0 {
		return fmt.Sprintf("corpus: %s line %d: %s", w.Path, w.Line, w.Message)
	}
	return fmt.Sprintf("corpus: %s: %s", w.Path, w.Message)
}

// maxWarnings bounds the warnings kept, so a million bad lines cannot use
// unbounded memory; the rest are counted in one final warning.
const maxWarnings = 1000

type warnings struct {
	list    []Warning
	dropped int
	path    string
	hinted  bool // the conversion hint for invalid UTF-8 was given
}

func (ws *warnings) add(path string, line int, format string, args ...any) {
	if len(ws.list) >= maxWarnings {
		ws.dropped++
		return
	}
	ws.list = append(ws.list, Warning{Path: path, Line: line, Message: fmt.Sprintf(format, args...)})
}

// invalidUTF8 warns of invalid UTF-8 replaced in the field what; the first
// such warning also says how to convert the file.
func (ws *warnings) invalidUTF8(path string, line int, what string) {
	hint := ""
	if !ws.hinted {
		ws.hinted = true
		hint = " (if the file is Latin-1, convert it to UTF-8 first: iconv -f latin1 -t utf-8 IN > OUT)"
	}
	ws.add(path, line, "invalid UTF-8 in the %s replaced by U+FFFD%s", what, hint)
}

func (ws *warnings) result() []Warning {
	if ws.dropped > 0 {
		return append(ws.list, Warning{Path: ws.path, Message: fmt.Sprintf("%d more warnings not shown", ws.dropped)})
	}
	return ws.list
}

// errAt formats a bad-input error naming path and line (line 0 is left out).
func errAt(path string, line int, sentinel error, format string, args ...any) error {
	msg := fmt.Sprintf(format, args...)
	if line > 0 {
		return &kindedError{msg: fmt.Sprintf("corpus: %s line %d: %s", path, line, msg), kind: sentinel, line: line}
	}
	return kindError(sentinel, "corpus: %s: %s", path, msg)
}

// maxQuoted is the most bytes of one value of the input (a column name, a
// label, a header line) that a message repeats: a 5 MB line must not become
// a 5 MB message.
const maxQuoted = 200

// quote is s in Go quotes, cut to maxQuoted bytes (at a character boundary)
// with the full length noted.
func quote(s string) string {
	if len(s) <= maxQuoted {
		return fmt.Sprintf("%q", s)
	}
	return fmt.Sprintf("%q… (%d bytes)", truncate(s, maxQuoted), len(s))
}

// maxListed is the most values of a list (columns, labels) a message names.
const maxListed = 20

// quoteList is ss as ["a" "b" …], each value quoted (and cut) by quote, at
// most maxListed of them with a count of the rest.
func quoteList(ss []string) string {
	var b strings.Builder
	b.WriteByte('[')
	for i, s := range ss {
		if i == maxListed {
			fmt.Fprintf(&b, " … and %d more", len(ss)-maxListed)
			break
		}
		if i > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(quote(s))
	}
	b.WriteByte(']')
	return b.String()
}

// kindedError is a bad-input message that wraps its sentinel without
// repeating the sentinel's text, so that the message ends with its fix
// ("… check the path") rather than a tag.
type kindedError struct {
	msg  string
	kind error
	line int // the line errAt named; 0 for the whole file
	// emptyLabel marks the error of an empty label, which Stream words
	// again when the label column looks like text (labelSample).
	emptyLabel bool
}

func (e *kindedError) Error() string { return e.msg }
func (e *kindedError) Unwrap() error { return e.kind }

// kindError formats a message that errors.Is matches to kind.
func kindError(kind error, format string, args ...any) error {
	return &kindedError{msg: fmt.Sprintf(format, args...), kind: kind}
}
