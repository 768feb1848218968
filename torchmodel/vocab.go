package torchmodel

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"telltale/internal/inputfile"
)

// maxListFile bounds the size of a vocabulary or labels file read into memory.
const maxListFile = 1 << 30

// ReadVocab reads a vocabulary: tokens by id. A file whose name ends in
// .json is a JSON object mapping each token to its id (ids 0 … n−1, each
// once); any other file has one token per line, the id being the line
// number counted from 0 (a final newline ends the last line; "\r\n" line
// ends are accepted). Empty tokens, duplicate tokens and, in JSON, missing,
// repeated or non-integer ids are errors naming the file, the line and
// the token.
func ReadVocab(path string) (_ []string, err error) {
	defer func() { err = plain(err) }()
	b, err := readSmall(path)
	if err != nil {
		return nil, err
	}
	if strings.EqualFold(filepath.Ext(path), ".json") {
		return vocabJSON(path, b)
	}
	return lines(path, b, "token")
}

// ReadLabels reads label names, one per line, in the order of the model's
// outputs.
func ReadLabels(path string) ([]string, error) {
	b, err := readSmall(path)
	if err != nil {
		return nil, plain(err)
	}
	words, err := lines(path, b, "label")
	return words, plain(err)
}

func readSmall(path string) ([]byte, error) {
	f, err := inputfile.Open(path)
	if err != nil {
		return nil, fmt.Errorf("torchmodel: %w", err)
	}
	defer f.Close()
	b, err := io.ReadAll(io.LimitReader(f, maxListFile+1))
	if err != nil {
		return nil, fmt.Errorf("torchmodel: %s: %w", path, err)
	}
	if len(b) > maxListFile {
		return nil, fmt.Errorf("torchmodel: %s: larger than %d bytes: %w", path, maxListFile, ErrVocab)
	}
	if !utf8.Valid(b) {
		return nil, fmt.Errorf("torchmodel: %s: not UTF-8 text: %w", path, ErrVocab)
	}
	return bytes.TrimPrefix(b, []byte("\ufeff")), nil
}

// lines splits b into one entry per line, refusing empty and repeated ones.
func lines(path string, b []byte, what string) ([]string, error) {
	s := strings.TrimSuffix(string(b), "\n")
	if s == "" {
		return nil, fmt.Errorf("torchmodel: %s: no %ss: give one %s per line: %w", path, what, what, ErrVocab)
	}
	out := strings.Split(s, "\n")
	seen := make(map[string]int, len(out))
	for i, t := range out {
		t = strings.TrimSuffix(t, "\r")
		out[i] = t
		if t == "" {
			return nil, fmt.Errorf("torchmodel: %s line %d: an empty %s: give one %s per line, without blank lines: %w", path, i+1, what, what, ErrVocab)
		}
		if j, dup := seen[t]; dup {
			return nil, fmt.Errorf("torchmodel: %s line %d: the %s %q again (first on line %d): each must appear once: %w", path, i+1, what, t, j+1, ErrVocab)
		}
		seen[t] = i
	}
	return out, nil
}

// vocabJSON reads {"token": id, …}, keeping track of lines for messages:
// encoding/json would silently keep the last of two equal keys, so the
// object is read token by token.
func vocabJSON(path string, b []byte) ([]string, error) {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	lineAt := func() int { return 1 + bytes.Count(b[:dec.InputOffset()], []byte("\n")) }
	bad := func(format string, args ...any) error {
		return fmt.Errorf("torchmodel: %s line %d: %s: %w", path, lineAt(), fmt.Sprintf(format, args...), ErrVocab)
	}
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return nil, bad("not a JSON object of token → id (use a .txt file for one token per line)")
	}
	ids := map[string]int{}
	lineOf := map[string]int{}
	var byID []string
	for dec.More() {
		kt, err := dec.Token()
		if err != nil {
			return nil, bad("malformed JSON: %v", err)
		}
		tok, line := kt.(string), lineAt()
		vt, err := dec.Token()
		if err != nil {
			return nil, bad("malformed JSON: %v", err)
		}
		num, ok := vt.(json.Number)
		id, err := num.Int64()
		if !ok || err != nil || id < 0 || id >= int64(len(b)) {
			return nil, bad("the id of %q is %v, not a non-negative integer below the number of tokens", tok, vt)
		}
		if tok == "" {
			return nil, bad("an empty token")
		}
		if _, dup := ids[tok]; dup {
			return nil, bad("the token %q again (first on line %d): each token must appear once", tok, lineOf[tok])
		}
		ids[tok], lineOf[tok] = int(id), line
		for len(byID) <= int(id) {
			byID = append(byID, "")
		}
		if byID[id] != "" {
			return nil, bad("id %d given to %q and to %q: each id must name one token", id, byID[id], tok)
		}
		byID[id] = tok
	}
	if _, err := dec.Token(); err != nil {
		return nil, bad("malformed JSON: %v", err)
	}
	if _, err := dec.Token(); err != io.EOF {
		return nil, bad("more after the JSON object: give one object of token → id")
	}
	if len(byID) == 0 {
		return nil, bad("an empty vocabulary")
	}
	for id, t := range byID {
		if t == "" {
			return nil, fmt.Errorf("torchmodel: %s: no token has id %d (ids run to %d): ids must be 0 … n−1 without gaps: %w", path, id, len(byID)-1, ErrVocab)
		}
	}
	return byID, nil
}

// Names under which vocabularies commonly list their padding and unknown
// tokens (common practice, no source: torchtext, Keras, Hugging Face, GloVe
// scripts).
var (
	padNames = []string{"<pad>", "<PAD>", "[PAD]", "<blank>", "PAD", "<padding>"}
	unkNames = []string{"<unk>", "<UNK>", "[UNK]", "UNK", "<oov>", "<OOV>", "[OOV]"}
)

// detectID returns the id of the one token of vocab named in names, -1 and
// the matches when none or several are.
func detectID(vocab []string, names []string) (int, []string) {
	id := -1
	var found []string
	for i, t := range vocab {
		for _, n := range names {
			if t == n {
				id = i
				found = append(found, fmt.Sprintf("%q (id %d)", t, i))
			}
		}
	}
	if len(found) != 1 {
		return -1, found
	}
	return id, found
}
