package main

import (
	"bufio"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"telltale/corpus"
)

// meta describes a prepared corpus (DIR/meta.json).
type meta struct {
	Corpus    string                 `json:"corpus"` // "synth-10000", "spam", …
	Texts     int                    `json:"texts"`
	Tokens    int64                  `json:"tokens"`
	VocabSize int                    `json:"vocab_size"`
	Labels    []string               `json:"labels"`
	MaxLen    int                    `json:"max_len"` // texts were cut to this many tokens (0: none)
	Tokenizer corpus.TokenizerConfig `json:"tokenizer"`
}

// prepared is a corpus encoded to ids, ready for training.
type prepared struct {
	meta   meta
	words  []string // by id
	ids    [][]int32
	labels []int
	texts  []string // the raw texts, when known (else rebuilt from words)
}

// writeTexts writes dir/data.jsonl, the corpus as labeled text for
// `telltale train` ({"text": …, "label": …} per line).
func writeTexts(dir string, p *prepared) error {
	return writeAtomic(filepath.Join(dir, "data.jsonl"), func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		e := json.NewEncoder(bw)
		var sb strings.Builder
		for i, ids := range p.ids {
			text := ""
			if p.texts != nil {
				text = p.texts[i]
			} else {
				sb.Reset()
				for j, id := range ids {
					if j > 0 {
						sb.WriteByte(' ')
					}
					sb.WriteString(p.words[id])
				}
				text = sb.String()
			}
			if err := e.Encode(map[string]string{"text": text, "label": p.meta.Labels[p.labels[i]]}); err != nil {
				return err
			}
		}
		return bw.Flush()
	})
}

// writeLines writes dir/lines.txt, the corpus's texts one per line in the
// order of ids.bin, as `telltale predict` reads standard input: each line
// break of a text becomes a space (the tokenizer splits at both alike, so
// the tokens are unchanged). A text that would be a blank line, which
// predict skips, is an error, so that line i is always text i.
func writeLines(dir string, p *prepared) error {
	return writeAtomic(filepath.Join(dir, "lines.txt"), func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		var sb strings.Builder
		for i, ids := range p.ids {
			line := ""
			if p.texts != nil {
				line = flatten(p.texts[i])
			} else {
				sb.Reset()
				for j, id := range ids {
					if j > 0 {
						sb.WriteByte(' ')
					}
					sb.WriteString(p.words[id])
				}
				line = sb.String()
			}
			if strings.TrimSpace(line) == "" {
				return fmt.Errorf("bench: text %d of %s is blank: predict would skip its line", i, p.meta.Corpus)
			}
			bw.WriteString(line)
			bw.WriteByte('\n')
		}
		return bw.Flush()
	})
}

// flatten puts a text on one line: carriage returns and line feeds become
// spaces.
func flatten(s string) string {
	return strings.Map(func(r rune) rune {
		if r == '\n' || r == '\r' {
			return ' '
		}
		return r
	}, s)
}

// idsMagic starts DIR/ids.bin ("TID1" little-endian).
const idsMagic = 0x31444954

// writeIDs writes p to dir: ids.bin, vocab.txt (one word per line, by id)
// and meta.json. ids.bin is little-endian int32 throughout:
//
//	magic, vocab size, classes, n, len[0…n−1], label[0…n−1], then the ids
//	of text 0, text 1, … (len[i] each)
//
// so that numpy.fromfile reads it in one call.
func writeIDs(dir string, p *prepared) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	err := writeAtomic(filepath.Join(dir, "ids.bin"), func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		var buf [4]byte
		put := func(v int32) {
			binary.LittleEndian.PutUint32(buf[:], uint32(v))
			bw.Write(buf[:])
		}
		put(idsMagic)
		put(int32(p.meta.VocabSize))
		put(int32(len(p.meta.Labels)))
		put(int32(len(p.ids)))
		for _, t := range p.ids {
			put(int32(len(t)))
		}
		for _, y := range p.labels {
			put(int32(y))
		}
		for _, t := range p.ids {
			for _, id := range t {
				put(id)
			}
		}
		return bw.Flush()
	})
	if err != nil {
		return err
	}
	err = writeAtomic(filepath.Join(dir, "vocab.txt"), func(w io.Writer) error {
		bw := bufio.NewWriter(w)
		for _, s := range p.words {
			bw.WriteString(s)
			bw.WriteByte('\n')
		}
		return bw.Flush()
	})
	if err != nil {
		return err
	}
	return writeAtomic(filepath.Join(dir, "meta.json"), func(w io.Writer) error {
		e := json.NewEncoder(w)
		e.SetIndent("", "  ")
		return e.Encode(p.meta)
	})
}

// readIDs reads what writeIDs wrote to dir.
func readIDs(dir string) (*prepared, error) {
	p := &prepared{}
	b, err := os.ReadFile(filepath.Join(dir, "meta.json"))
	if err != nil {
		return nil, fmt.Errorf("bench: %w (run `bench prepare` first)", err)
	}
	if err := json.Unmarshal(b, &p.meta); err != nil {
		return nil, fmt.Errorf("bench: %s: %w", filepath.Join(dir, "meta.json"), err)
	}
	vb, err := os.ReadFile(filepath.Join(dir, "vocab.txt"))
	if err != nil {
		return nil, err
	}
	p.words = strings.Split(strings.TrimSuffix(string(vb), "\n"), "\n")
	path := filepath.Join(dir, "ids.bin")
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	if len(raw)%4 != 0 || len(raw) < 16 {
		return nil, fmt.Errorf("bench: %s: truncated (%d bytes): run `bench prepare` again", path, len(raw))
	}
	all := make([]int32, len(raw)/4)
	for i := range all {
		all[i] = int32(binary.LittleEndian.Uint32(raw[4*i:]))
	}
	raw = nil
	if all[0] != idsMagic {
		return nil, fmt.Errorf("bench: %s: not an ids file: run `bench prepare` again", path)
	}
	vocab, classes, n := int(all[1]), int(all[2]), int(all[3])
	if vocab != p.meta.VocabSize || classes != len(p.meta.Labels) || vocab != len(p.words) || 4+2*n > len(all) {
		return nil, fmt.Errorf("bench: %s does not match meta.json and vocab.txt: run `bench prepare` again", path)
	}
	lens, labels := all[4:4+n], all[4+n:4+2*n]
	flat := all[4+2*n:]
	p.ids = make([][]int32, n)
	p.labels = make([]int, n)
	off := 0
	for i := range n {
		l := int(lens[i])
		if l < 0 || off+l > len(flat) || labels[i] < 0 || int(labels[i]) >= classes {
			return nil, fmt.Errorf("bench: %s: text %d out of range: run `bench prepare` again", path, i)
		}
		p.ids[i] = flat[off : off+l : off+l]
		p.labels[i] = int(labels[i])
		off += l
	}
	if off != len(flat) {
		return nil, fmt.Errorf("bench: %s: %d ids past the last text", path, len(flat)-off)
	}
	return p, nil
}

// writeAtomic writes a file through a temporary file in the same folder and
// a rename.
func writeAtomic(path string, fill func(io.Writer) error) (err error) {
	f, err := os.CreateTemp(filepath.Dir(path), ".tmp-"+filepath.Base(path)+"-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(f.Name())
		}
	}()
	if err = f.Chmod(0o644); err != nil {
		return err
	}
	if err = fill(f); err != nil {
		return err
	}
	if err = f.Close(); err != nil {
		return err
	}
	return os.Rename(f.Name(), path)
}

// Synthetic corpus parameters: texts of 52–102 tokens (77 on average) drawn
// from a Zipf distribution (exponent 1.1, the order of the exponents
// measured on English text; common practice, no source) over synthUniverse
// word types, two classes, each text carrying one to three cue words of its
// class so that the model has something to learn. The words are written in
// letters only, so that the audit finds label-neutral words among the
// common ones (it edits only words of letters in); and a collection
// artifact is planted: the stamp synthStamp ends synthStampB of the texts
// of label b and synthStampA of those of label a, a word of a fixed
// position and an identifier's shape for the audit to find.
const (
	synthUniverse = 50000
	synthMinLen   = 52
	synthSpread   = 51
	synthCues     = 20
	synthStamp    = "tkt0417"
	synthStampA   = 0.01
	synthStampB   = 0.3
)

// synthWord is the name of word k of the universe: "w" followed by k in
// bijective base 26 (a, …, z, aa, ab, …), so every name is distinct,
// letters only and one token; word synthUniverse is the stamp.
func synthWord(k int) string {
	if k == synthUniverse {
		return synthStamp
	}
	var b []byte
	for k++; k > 0; k = (k - 1) / 26 {
		b = append(b, byte('a'+(k-1)%26))
	}
	slices.Reverse(b)
	return "w" + string(b)
}

// synthetic generates n seeded texts as ids, with the vocabulary built the
// way corpus.BuildVocab orders it (most frequent first, ties by word; PAD
// and UNK first). Word k of the universe is written synthWord(k), a single
// token for telltale's tokenizer.
func synthetic(n int, seed uint64) *prepared {
	rng := rand.New(rand.NewPCG(seed, seed^0x243f6a8885a308d3))
	z := rand.NewZipf(rng, 1.1, 1, synthUniverse-1)
	flat := make([]int32, 0, n*(synthMinLen+synthSpread/2+2))
	lens := make([]int, n)
	labels := make([]int, n)
	for i := range n {
		l := synthMinLen + rng.IntN(synthSpread)
		y := rng.IntN(2)
		labels[i] = y
		start := len(flat)
		for range l {
			flat = append(flat, int32(z.Uint64()))
		}
		for range 1 + rng.IntN(3) {
			flat[start+rng.IntN(l)] = int32(1000 + y*synthCues + rng.IntN(synthCues))
		}
		if rng.Float64() < []float64{synthStampA, synthStampB}[y] {
			flat = append(flat, synthUniverse)
		}
		lens[i] = len(flat) - start
	}
	counts := make([]int, synthUniverse+1)
	for _, w := range flat {
		counts[w]++
	}
	var seen []int32
	for w, c := range counts {
		if c > 0 {
			seen = append(seen, int32(w))
		}
	}
	name := func(w int32) string { return synthWord(int(w)) }
	slices.SortFunc(seen, func(a, b int32) int {
		if counts[a] != counts[b] {
			return counts[b] - counts[a]
		}
		return strings.Compare(name(a), name(b))
	})
	toID := make([]int32, synthUniverse+1)
	words := []string{corpus.PADWord, corpus.UNKWord}
	for i, w := range seen {
		toID[w] = int32(i + 2)
		words = append(words, name(w))
	}
	for i, w := range flat {
		flat[i] = toID[w]
	}
	p := &prepared{words: words, labels: labels, ids: make([][]int32, n)}
	off := 0
	for i, l := range lens {
		p.ids[i] = flat[off : off+l : off+l]
		off += l
	}
	p.meta = meta{Corpus: fmt.Sprintf("synth-%d", n), Texts: n, Tokens: int64(len(flat)), VocabSize: len(words),
		Labels: []string{"a", "b"}, Tokenizer: corpus.TokenizerConfig{Lower: true}}
	return p
}

// spamMaxLen is the token limit of SpamAssassin texts (the train command's
// default --max-len).
const spamMaxLen = 400

// spamGroups maps the corpus's folders to the two labels.
var spamGroups = map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham", "hard-ham-1": "ham",
	"spam-1": "spam", "spam-2": "spam"}

// loadSpam reads the SpamAssassin corpus at root (one folder per group),
// keeps each mail's subject and body (corpus.SubjectAndBody), relabels the groups ham and
// spam and splits off 20% (seed 7) as the held-out split.
func loadSpam(root string) (train, held *corpus.Dataset, err error) {
	d, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		return nil, nil, fmt.Errorf("bench: %w (run `make corpora` to fetch the corpus)", err)
	}
	for i := range d.Examples {
		d.Examples[i].Text = corpus.SubjectAndBody(d.Examples[i].Text)
	}
	bin := d.Relabel(spamGroups)
	train, held = bin.Split(0.2, 7)
	return train, held, nil
}

// spamPrepared encodes the training split of the SpamAssassin corpus, or
// with whole every mail of it (corpus name "spam-all").
func spamPrepared(root string, threads int, whole bool) (*prepared, error) {
	train, held, err := loadSpam(root)
	if err != nil {
		return nil, err
	}
	name := "spam"
	if whole {
		all := *train
		all.Examples = append(slices.Clip(train.Examples), held.Examples...)
		train, name = &all, "spam-all"
	}
	tc := corpus.TokenizerConfig{Lower: true, MinCount: 1}
	enc, err := corpus.TrainEncoder(tc, train.Texts())
	if err != nil {
		return nil, err
	}
	enc.MaxTokens = spamMaxLen
	y, err := train.LabelIndex(train.Labels)
	if err != nil {
		return nil, err
	}
	p := &prepared{words: enc.Vocab.Words, labels: y, ids: enc.EncodeAll(train.Texts(), threads), texts: train.Texts()}
	var tokens int64
	for _, t := range p.ids {
		tokens += int64(len(t))
	}
	p.meta = meta{Corpus: name, Texts: len(p.ids), Tokens: tokens, VocabSize: len(p.words), Labels: train.Labels,
		MaxLen: spamMaxLen, Tokenizer: enc.Tok.Config()}
	return p, nil
}
