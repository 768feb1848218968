package main

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"unicode/utf8"
)

// Hand-written JSON for the lines that predict prints by the thousand:
// appended to a reused buffer, so a line costs no allocation. The output is
// byte for byte what encoding/json's Marshal writes for the same values
// (HTML characters escaped, invalid UTF-8 replaced, U+2028 and U+2029
// escaped, floats in its shortest form); jsonline_test.go checks it
// against encoding/json on fixed cases and by fuzzing.

const hexDigits = "0123456789abcdef"

// plainJSON marks the ASCII bytes that a JSON string holds as they are:
// not control bytes, not " or \, and not <, > or & (HTML-safe).
var plainJSON = func() (t [utf8.RuneSelf]bool) {
	for b := 0x20; b < utf8.RuneSelf; b++ {
		t[b] = b != '"' && b != '\\' && b != '<' && b != '>' && b != '&'
	}
	return t
}()

// appendJSONString appends s as a JSON string, as encoding/json writes it.
func appendJSONString(dst []byte, s string) []byte {
	dst = append(dst, '"')
	start := 0
	for i := 0; i < len(s); {
		if b := s[i]; b < utf8.RuneSelf {
			if plainJSON[b] {
				i++
				continue
			}
			dst = append(dst, s[start:i]...)
			switch b {
			case '\\', '"':
				dst = append(dst, '\\', b)
			case '\b':
				dst = append(dst, '\\', 'b')
			case '\f':
				dst = append(dst, '\\', 'f')
			case '\n':
				dst = append(dst, '\\', 'n')
			case '\r':
				dst = append(dst, '\\', 'r')
			case '\t':
				dst = append(dst, '\\', 't')
			default: // other control bytes, and <, > and & (HTML-safe)
				dst = append(dst, '\\', 'u', '0', '0', hexDigits[b>>4], hexDigits[b&0xF])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size == 1:
			dst = append(dst, s[start:i]...)
			dst = append(dst, `\ufffd`...)
		case r == '\u2028' || r == '\u2029':
			dst = append(dst, s[start:i]...)
			dst = append(dst, '\\', 'u', '2', '0', '2', hexDigits[r&0xF])
		default:
			i += size
			continue
		}
		i += size
		start = i
	}
	dst = append(dst, s[start:]...)
	return append(dst, '"')
}

// appendJSONFloat appends f as encoding/json writes a float64; like it, it
// refuses NaN and the infinities.
func appendJSONFloat(dst []byte, f float64) ([]byte, error) {
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return dst, fmt.Errorf("json: unsupported value: %s", strconv.FormatFloat(f, 'g', -1, 64))
	}
	format := byte('f')
	if abs := math.Abs(f); abs != 0 && (abs < 1e-6 || abs >= 1e21) {
		format = 'e'
	}
	dst = strconv.AppendFloat(dst, f, format, -1, 64)
	if format == 'e' {
		// e-09 → e-9, as encoding/json writes it.
		if n := len(dst); n >= 4 && dst[n-4] == 'e' && dst[n-3] == '-' && dst[n-2] == '0' {
			dst[n-2] = dst[n-1]
			dst = dst[:n-1]
		}
	}
	return dst, nil
}

// predictionJSON writes the JSON lines of predict: the object
//
//	{"text":…,"line":…,"file":…,"label":…,"probabilities":{label: p, …}}
//
// with line and file left out when zero, and the probabilities in the
// order of their sorted labels (a label given twice keeps its last class's
// value), as encoding/json writes a map.
type predictionJSON struct {
	labels []string
	keys   []string // the distinct labels, sorted, each already a JSON string
	class  []int    // the class whose probability each key gets
}

func newPredictionJSON(labels []string) *predictionJSON {
	p := &predictionJSON{labels: labels}
	last := map[string]int{}
	for c, l := range labels {
		last[l] = c
	}
	order := make([]string, 0, len(last))
	for l := range last {
		order = append(order, l)
	}
	slices.Sort(order)
	for _, l := range order {
		p.keys = append(p.keys, string(appendJSONString(nil, l)))
		p.class = append(p.class, last[l])
	}
	return p
}

// appendLine appends the line of one text and a newline; probs holds one
// probability per class.
func (p *predictionJSON) appendLine(dst []byte, t text, probs []float32) ([]byte, error) {
	dst = append(dst, `{"text":`...)
	dst = appendJSONString(dst, t.Text)
	if t.Line != 0 {
		dst = append(dst, `,"line":`...)
		dst = strconv.AppendInt(dst, int64(t.Line), 10)
	}
	if t.File != "" {
		dst = append(dst, `,"file":`...)
		dst = appendJSONString(dst, t.File)
	}
	dst = append(dst, `,"label":`...)
	dst = appendJSONString(dst, p.labels[argmax(probs)])
	dst = append(dst, `,"probabilities":{`...)
	for i, k := range p.keys {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = append(dst, k...)
		dst = append(dst, ':')
		var err error
		if dst, err = appendJSONFloat(dst, float64(probs[p.class[i]])); err != nil {
			return dst, err
		}
	}
	return append(dst, "}}\n"...), nil
}
