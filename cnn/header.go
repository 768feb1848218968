package cnn

import (
	"bytes"
	"encoding/json"
	"strings"
	"unicode/utf8"
)

// A model file's JSON header is mostly two members: the vocabulary (an
// array of one string per word) and the linear baseline (n-grams and
// settings, kept raw until a caller wants the baseline). encoding/json
// scans the whole header once to find its end and again to decode it,
// which for a vocabulary of 100,000 words and a baseline of a few MB is
// most of a model's load time. decodeHeaderFast finds the top-level
// members with a scan of its own, decodes the vocabulary's plain strings
// as substrings of one string, keeps the baseline's bytes as they are, and
// hands the small rest to encoding/json. Whatever it does not recognise
// makes it give up, and decode then runs encoding/json on the whole header.

// decodeHeaderFast decodes the header js into hi as
// json.NewDecoder(bytes.NewReader(js)).Decode(hi) does, and reports
// whether it could; on false hi is left as it was. It handles a compact or
// spaced JSON object whose member names have no escapes and appear once,
// and whose "vocab" is null or an array of strings. The baseline member's
// syntax is checked only as far as its brackets and strings: a file whose
// checksum matches was written by json.Marshal.
func decodeHeaderFast(js []byte, hi *headerIn) bool {
	ms, ok := topMembers(js)
	if !ok {
		return false
	}
	var vocab, base []byte
	var rest bytes.Buffer
	rest.WriteByte('{')
	seen := map[string]bool{}
	for _, mb := range ms {
		if seen[mb.name] {
			return false
		}
		seen[mb.name] = true
		switch {
		case mb.name == "vocab":
			vocab = mb.value
			continue
		case mb.name == "baseline":
			base = mb.value
			continue
		case strings.EqualFold(mb.name, "vocab") || strings.EqualFold(mb.name, "baseline"):
			return false // encoding/json matches names regardless of case
		}
		if rest.Len() > 1 {
			rest.WriteByte(',')
		}
		rest.Write(mb.raw)
	}
	rest.WriteByte('}')
	var out headerIn
	if err := json.Unmarshal(rest.Bytes(), &out); err != nil {
		return false
	}
	if vocab != nil {
		if out.Vocab, ok = decodeStrings(vocab); !ok {
			return false
		}
	}
	if base != nil {
		out.Baseline = json.RawMessage(base)
	}
	*hi = out
	return true
}

// member is one top-level member of a JSON object: its name, its value's
// bytes and the whole `"name":value` text.
type member struct {
	name       string
	value, raw []byte
}

// topMembers splits the JSON object at the start of js (after white space;
// what follows it is ignored, as json.Decoder does) into its members.
func topMembers(js []byte) ([]member, bool) {
	i := skipSpace(js, 0)
	if i >= len(js) || js[i] != '{' {
		return nil, false
	}
	var ms []member
	i = skipSpace(js, i+1)
	if i < len(js) && js[i] == '}' {
		return ms, true
	}
	for i < len(js) {
		k0 := i
		k1, ok := skipString(js, i)
		if !ok || bytes.IndexByte(js[k0:k1], '\\') >= 0 {
			return nil, false
		}
		i = skipSpace(js, k1)
		if i >= len(js) || js[i] != ':' {
			return nil, false
		}
		v0 := skipSpace(js, i+1)
		v1, ok := skipValue(js, v0)
		if !ok {
			return nil, false
		}
		ms = append(ms, member{name: string(js[k0+1 : k1-1]), value: js[v0:v1], raw: js[k0:v1]})
		i = skipSpace(js, v1)
		if i >= len(js) {
			return nil, false
		}
		switch js[i] {
		case '}':
			return ms, true
		case ',':
			i = skipSpace(js, i+1)
		default:
			return nil, false
		}
	}
	return nil, false
}

func skipSpace(js []byte, i int) int {
	for i < len(js) && (js[i] == ' ' || js[i] == '\t' || js[i] == '\n' || js[i] == '\r') {
		i++
	}
	return i
}

// skipString returns the end of the JSON string that starts at js[i],
// checking its escapes and that it holds no control character.
func skipString(js []byte, i int) (int, bool) {
	if i >= len(js) || js[i] != '"' {
		return 0, false
	}
	for i++; i < len(js); i++ {
		switch c := js[i]; {
		case c == '"':
			return i + 1, true
		case c == '\\':
			if i++; i >= len(js) {
				return 0, false
			}
			switch js[i] {
			case '"', '\\', '/', 'b', 'f', 'n', 'r', 't':
			case 'u':
				if i+4 >= len(js) || !isHex(js[i+1]) || !isHex(js[i+2]) || !isHex(js[i+3]) || !isHex(js[i+4]) {
					return 0, false
				}
				i += 4
			default:
				return 0, false
			}
		case c < 0x20:
			return 0, false
		}
	}
	return 0, false
}

func isHex(c byte) bool { return c >= '0' && c <= '9' || c >= 'a' && c <= 'f' || c >= 'A' && c <= 'F' }

// maxDepth is the deepest nesting skipValue follows (encoding/json's
// bound is 10,000; a model header nests a few levels).
const maxDepth = 1000

// skipValue returns the end of the JSON value that starts at js[i],
// checking its syntax as encoding/json does.
func skipValue(js []byte, i int) (int, bool) { return skipValueDepth(js, i, 0) }

func skipValueDepth(js []byte, i, depth int) (int, bool) {
	if i >= len(js) || depth > maxDepth {
		return 0, false
	}
	switch js[i] {
	case '"':
		return skipString(js, i)
	case '{':
		return skipMembers(js, i, depth)
	case '[':
		i = skipSpace(js, i+1)
		if i < len(js) && js[i] == ']' {
			return i + 1, true
		}
		for {
			end, ok := skipValueDepth(js, i, depth+1)
			if i = skipSpace(js, end); !ok || i >= len(js) {
				return 0, false
			}
			if js[i] == ']' {
				return i + 1, true
			}
			if js[i] != ',' {
				return 0, false
			}
			i = skipSpace(js, i+1)
		}
	case 't':
		return skipWord(js, i, "true")
	case 'f':
		return skipWord(js, i, "false")
	case 'n':
		return skipWord(js, i, "null")
	}
	return skipNumber(js, i)
}

// skipMembers returns the end of the JSON object that starts at js[i].
func skipMembers(js []byte, i, depth int) (int, bool) {
	i = skipSpace(js, i+1)
	if i < len(js) && js[i] == '}' {
		return i + 1, true
	}
	for {
		end, ok := skipString(js, i)
		if i = skipSpace(js, end); !ok || i >= len(js) || js[i] != ':' {
			return 0, false
		}
		end, ok = skipValueDepth(js, skipSpace(js, i+1), depth+1)
		if i = skipSpace(js, end); !ok || i >= len(js) {
			return 0, false
		}
		if js[i] == '}' {
			return i + 1, true
		}
		if js[i] != ',' {
			return 0, false
		}
		i = skipSpace(js, i+1)
	}
}

func skipWord(js []byte, i int, w string) (int, bool) {
	if len(js)-i < len(w) || string(js[i:i+len(w)]) != w {
		return 0, false
	}
	return i + len(w), true
}

// skipNumber returns the end of the JSON number at js[i]:
// -?(0|[1-9][0-9]*)(.[0-9]+)?([eE][+-]?[0-9]+)?
func skipNumber(js []byte, i int) (int, bool) {
	digits := func(i int) int {
		for i < len(js) && js[i] >= '0' && js[i] <= '9' {
			i++
		}
		return i
	}
	if i < len(js) && js[i] == '-' {
		i++
	}
	switch {
	case i < len(js) && js[i] == '0':
		i++
	case i < len(js) && js[i] >= '1' && js[i] <= '9':
		i = digits(i)
	default:
		return 0, false
	}
	if i < len(js) && js[i] == '.' {
		j := digits(i + 1)
		if j == i+1 {
			return 0, false
		}
		i = j
	}
	if i < len(js) && (js[i] == 'e' || js[i] == 'E') {
		i++
		if i < len(js) && (js[i] == '+' || js[i] == '-') {
			i++
		}
		j := digits(i)
		if j == i {
			return 0, false
		}
		i = j
	}
	return i, true
}

// decodeStrings decodes null or a JSON array of strings. Strings without
// escapes and of valid UTF-8 become substrings of one string made of raw;
// the others are decoded by encoding/json.
func decodeStrings(raw []byte) ([]string, bool) {
	if string(raw) == "null" {
		return nil, true
	}
	if len(raw) < 2 || raw[0] != '[' {
		return nil, false
	}
	all := string(raw)
	out := []string{}
	i := skipSpace(raw, 1)
	if i < len(raw) && raw[i] == ']' {
		return out, skipSpace(raw, i+1) == len(raw)
	}
	for i < len(raw) {
		end, ok := skipString(raw, i)
		if !ok {
			return nil, false
		}
		s := all[i+1 : end-1]
		if strings.IndexByte(s, '\\') >= 0 || !utf8.ValidString(s) {
			if json.Unmarshal(raw[i:end], &s) != nil {
				return nil, false
			}
		}
		out = append(out, s)
		i = skipSpace(raw, end)
		if i >= len(raw) {
			return nil, false
		}
		switch raw[i] {
		case ']':
			return out, skipSpace(raw, i+1) == len(raw)
		case ',':
			i = skipSpace(raw, i+1)
		default:
			return nil, false
		}
	}
	return nil, false
}
