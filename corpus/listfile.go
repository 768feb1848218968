package corpus

import (
	"bufio"
	"bytes"
	"fmt"
	"strings"
	"unicode/utf8"

	"telltale/internal/inputfile"
)

// ListEntry is one entry of a list file: its text and its line (from 1).
type ListEntry struct {
	Text string
	Line int
}

// ReadListFile reads a list file of one entry per line, as a cue-pattern
// file is read (LoadCueMasker): a UTF-8 byte order mark is skipped, each
// line is trimmed of surrounding white space, and blank lines and lines
// starting with "#" are skipped. A file in UTF-16, a line that is not
// UTF-8 and a line over 1 MiB are errors naming the file and the line,
// wrapping ErrEncoding or ErrTooLong; a file that cannot be read is an
// error wrapping the os error.
func ReadListFile(path string) ([]ListEntry, error) {
	data, err := inputfile.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("corpus: %w", err)
	}
	return ParseList(path, data)
}

// ParseList reads the contents data of a list file as ReadListFile reads
// the file; name names it in messages.
func ParseList(name string, data []byte) ([]ListEntry, error) {
	var out []ListEntry
	err := eachListLine(name, data, func(e ListEntry) error {
		out = append(out, e)
		return nil
	}, nil)
	return out, err
}

// eachListLine calls fn for each entry of a list file's contents data
// (see ReadListFile); name names the file in messages. Its own errors
// wrap kind, or ErrEncoding and ErrTooLong when kind is nil; an error of
// fn stops the reading and is returned as it is.
func eachListLine(name string, data []byte, fn func(ListEntry) error, kind error) error {
	bad := func(k error, format string, args ...any) error {
		if kind != nil {
			k = kind
		}
		return kindError(k, format, args...)
	}
	// A byte order mark would otherwise become part of the first entry.
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	if bytes.HasPrefix(data, []byte("\xff\xfe")) || bytes.HasPrefix(data, []byte("\xfe\xff")) {
		return bad(ErrEncoding, "corpus: %s line 1: the file is UTF-16: save it as UTF-8", name)
	}
	sc := bufio.NewScanner(bytes.NewReader(data))
	sc.Buffer(make([]byte, 64<<10), 1<<20)
	line := 0
	for sc.Scan() {
		line++
		s := strings.TrimSpace(sc.Text())
		if s == "" || strings.HasPrefix(s, "#") {
			continue
		}
		if !utf8.ValidString(s) {
			return bad(ErrEncoding, "corpus: %s line %d: not UTF-8 text: save the file as UTF-8", name, line)
		}
		if err := fn(ListEntry{Text: s, Line: line}); err != nil {
			return err
		}
	}
	if err := sc.Err(); err != nil {
		return bad(ErrTooLong, "corpus: %s line %d: %v: keep lines under 1 MiB", name, line+1, err)
	}
	return nil
}
