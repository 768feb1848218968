package cnn

import (
	"bytes"
	"encoding/json"
	"reflect"
	"testing"

	"telltale/linear"
)

// decodeHeaderReference is the header decoding that decodeHeaderFast
// stands in for: encoding/json's Decoder on the whole header.
func decodeHeaderReference(js []byte) (headerIn, error) {
	var hi headerIn
	err := json.NewDecoder(bytes.NewReader(js)).Decode(&hi)
	return hi, err
}

// headerCases are headers as json.Marshal writes them (the vocabulary with
// words that need escapes, non-ASCII words and invalid UTF-8, which
// encoding/json turns into U+FFFD) and hand-written variants: spaces,
// members in another order, no vocabulary, a null one, an empty one, a
// baseline with strings holding brackets, and trailing bytes after the
// object (which json.Decoder ignores).
func headerCases(t testing.TB) [][]byte {
	h := fileHeader{
		Config:   Config{VocabSize: 9, Dim: 2, Widths: []int{1}, Filters: 1, Classes: 2},
		Labels:   []string{"ham", "spam"},
		Vocab:    []string{"<pad>", "<unk>", "plain", `quo"te`, `back\slash`, "tab\there", "naïve", "日本", "bad\xffutf8", "<b>&amp;"},
		Masked:   []int{0},
		Baseline: &linear.Model{},
	}
	js, err := json.Marshal(h)
	if err != nil {
		t.Fatal(err)
	}
	return [][]byte{
		js,
		append(append([]byte(nil), js...), " trailing"...),
		[]byte(`{"labels":["a","b"],"vocab":["<pad>","<unk>","x"],"config":{"Dim":3}}`),
		[]byte(` { "vocab" : [ "<pad>" , "<unk>" ] , "labels" : [ "a" ] } `),
		[]byte(`{"vocab":null,"labels":["a"]}`),
		[]byte(`{"vocab":[],"labels":["a"]}`),
		[]byte(`{"labels":["a"]}`),
		[]byte(`{}`),
		[]byte(`{"baseline":{"ngrams":["]","}","\"[",{"a":[1,2.5e-3,-4E+2,true,false,null]}]},"vocab":["w"]}`),
		[]byte(`{"baseline":null,"vocab":["w"]}`),
		[]byte(`{"config":{"vocab_size":3,"classes":2,"wide":true},"vocab":["<pad>","<unk>","x"]}`),
	}
}

// The fast header decoding gives what encoding/json gives on every header
// it accepts, and accepts the headers json.Marshal writes.
func TestDecodeHeaderFastMatchesEncodingJSON(t *testing.T) {
	for i, js := range headerCases(t) {
		var got headerIn
		if !decodeHeaderFast(js, &got) {
			t.Errorf("case %d: the fast decoding gave up on %s", i, js)
			continue
		}
		want, err := decodeHeaderReference(js)
		if err != nil {
			t.Fatalf("case %d: encoding/json: %v", i, err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("case %d: fast decoding\n%+v\nencoding/json\n%+v", i, got, want)
		}
	}
}

// Headers the fast decoding must leave to encoding/json: a name in other
// letter case (encoding/json matches it to the field), a name with an
// escape, a repeated name, a vocabulary that is not an array of strings,
// and broken syntax.
func TestDecodeHeaderFastGivesUp(t *testing.T) {
	for _, js := range []string{
		`{"Vocab":["a"]}`,
		`{"voc\u0061b":["a"]}`,
		`{"vocab":["a"],"vocab":["b"]}`,
		`{"vocab":[1,2]}`,
		`{"vocab":"a"}`,
		`{"vocab":["a",]}`,
		`{"vocab":["a"]`,
		`{"baseline":{"a":[}]}`,
		`["vocab"]`,
		`{"labels":5}`,
	} {
		hi := headerIn{fileHeader: fileHeader{Labels: []string{"untouched"}}}
		if decodeHeaderFast([]byte(js), &hi) {
			t.Errorf("%s: decoded, want a fallback to encoding/json", js)
		}
		if !reflect.DeepEqual(hi.Labels, []string{"untouched"}) {
			t.Errorf("%s: the header was changed before giving up", js)
		}
	}
}

// On any input, the fast decoding either gives up or agrees with
// encoding/json (which then must accept the input too).
func FuzzDecodeHeaderFast(f *testing.F) {
	for _, js := range headerCases(f) {
		f.Add(js)
	}
	f.Add([]byte(`{"vocab":["a\u00e9","\ud800"],"labels":[]}`))
	f.Fuzz(func(t *testing.T, js []byte) {
		var got headerIn
		if !decodeHeaderFast(js, &got) {
			return
		}
		want, err := decodeHeaderReference(js)
		if err != nil {
			t.Fatalf("fast decoding accepted %q, encoding/json: %v", js, err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("%q: fast decoding %+v, encoding/json %+v", js, got, want)
		}
	})
}
