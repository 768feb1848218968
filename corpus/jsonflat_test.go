package corpus

import (
	"encoding/json"
	"testing"
)

// jsonReference is what encoding/json (the reference) reads from line
// into a map: the string values of keys.text and keys.label, ok false when
// the line is not an object, a key is missing or a value is not a string.
func jsonReference(line []byte, keys jsonlKeys) (text, label string, ok bool) {
	var obj map[string]json.RawMessage
	if json.Unmarshal(line, &obj) != nil {
		return "", "", false
	}
	str := func(key string) (string, bool) {
		raw, found := obj[key]
		var s string
		if !found || json.Unmarshal(raw, &s) != nil {
			return "", false
		}
		return s, true
	}
	if text, ok = str(keys.text); !ok {
		return "", "", false
	}
	if keys.label != "" {
		if label, ok = str(keys.label); !ok {
			return "", "", false
		}
	}
	return text, label, true
}

// checkFlatJSON fails when parseFlatJSONLine accepts a line that the
// reference rejects or reads differently, or, when mustAccept, when it
// leaves the line to the general path.
func checkFlatJSON(t *testing.T, line string, keys jsonlKeys, mustAccept bool) {
	t.Helper()
	text, label, ok := parseFlatJSONLine([]byte(line), keys)
	if mustAccept && !ok {
		t.Fatalf("%q: left to the general path", line)
	}
	if !ok {
		return
	}
	wt, wl, wok := jsonReference([]byte(line), keys)
	if !wok || text != wt || label != wl {
		t.Fatalf("%q: read (%q, %q), encoding/json reads (%q, %q, ok %v)", line, text, label, wt, wl, wok)
	}
}

// The flat-line path agrees with encoding/json on the lines it takes and
// leaves every other line to the general path (RFC 8259 for the syntax;
// the cases are common practice, no source).
func TestParseFlatJSONLine(t *testing.T) {
	keys := jsonlKeys{text: "text", label: "label"}
	accepted := []string{
		`{"text":"good film","label":"pos"}`,
		` { "label" : "neg" ,	"text" : "bad" } ` + "\r",
		`{"text":"first","label":"a","text":"last"}`,
		`{"id":"7","text":"héllo wörld ✓","label":"b"}`,
		`{"text":"","label":""}`,
	}
	for _, line := range accepted {
		checkFlatJSON(t, line, keys, true)
	}
	refused := []string{
		`{"text":"a \"quoted\" word","label":"pos"}`, // escape
		`{"text":"tab	inside","label":"pos"}`,        // control byte
		`{"text":"x","label":1}`,                     // number label
		`{"text":"x"}`,                               // missing label
		`{"text":"x","label":"y",}`,                  // trailing comma
		`{"text":"x","label":"y"} extra`,
		`["text","x"]`,
		`{"text":"x","label":"y"`,
		"{\"text\":\"\xff\",\"label\":\"y\"}", // invalid UTF-8: encoding/json replaces it
		`{}`,
		`{"text":"x","label":"y","n":null}`,
	}
	for _, line := range refused {
		if _, _, ok := parseFlatJSONLine([]byte(line), keys); ok {
			t.Errorf("%q: taken, want the general path", line)
		}
	}
}

// FuzzParseFlatJSONLine: whatever the line, what the flat-line path takes
// it reads as encoding/json does.
func FuzzParseFlatJSONLine(f *testing.F) {
	for _, s := range []string{`{"text":"a b","label":"x"}`, `{"label":"y","text":"c"}`, `{"text":"a\nb","label":"x"}`, `{ "text" : "é" , "label" : "1" }`} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, line string) {
		checkFlatJSON(t, line, jsonlKeys{text: "text", label: "label"}, false)
		checkFlatJSON(t, line, jsonlKeys{text: "text"}, false)
	})
}

// BenchmarkParseFlatJSONLine compares the flat-line path with
// encoding/json on a line of 64 short words.
func BenchmarkParseFlatJSONLine(b *testing.B) {
	line := []byte(`{"label":"a","text":"wavae wkdd wab wee wamc wh wpu wl wn wbh wa wbfp wa wnr wp wdp wx wdb wd wa wa wa wbb wb weq wa wgay waz wb wa wfaj wab wazlc wa waly wl wao wb wgd wa wiv wa wbcym wo walu wccr wb weg we wa wfn wsi wa wb waraj wb wa wfpq waib wer wb wbjr wcbp wg wm"}`)
	keys := jsonlKeys{text: "text", label: "label"}
	b.Run("flat", func(b *testing.B) {
		for b.Loop() {
			if _, _, ok := parseFlatJSONLine(line, keys); !ok {
				b.Fatal("not taken")
			}
		}
	})
	b.Run("encoding-json", func(b *testing.B) {
		for b.Loop() {
			if _, _, ok := jsonReference(line, keys); !ok {
				b.Fatal("not read")
			}
		}
	})
}
