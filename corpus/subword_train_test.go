package corpus

import (
	"strings"
	"testing"

	"telltale/internal/testref"
)

// With subwords on, the words seen once in training are left out of the
// word list and split into pieces in the training texts themselves, so the
// pieces occur in training (and their vectors learn), whatever the
// MinCount. Checked on 300 mails of the SpamAssassin public corpus.
func TestTrainEncoderSplitsRareWords(t *testing.T) {
	root := testref.Corpus(t, "spamassassin", "easy-ham-1")
	d, _, err := Load(root, Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	var texts []string
	for _, e := range d.Examples[:300] {
		texts = append(texts, SubjectAndBody(e.Text))
	}
	enc, err := TrainEncoder(TokenizerConfig{Lower: true, MinCount: 1, Subword: true, SubwordSize: 500}, texts)
	if err != nil {
		t.Fatal(err)
	}
	counts := map[string]int{}
	for _, s := range texts {
		for _, tk := range enc.Tok.Tokenize(s) {
			counts[tk.Text]++
		}
	}
	isPiece := map[string]bool{}
	for _, p := range enc.Tok.Config().SubwordPieces {
		isPiece[p] = true
	}
	for w, c := range counts {
		if c < SubwordMinCount && !isPiece[w] && enc.Vocab.ID(w) != UNK {
			t.Fatalf("word %q seen %d time(s) has its own vector", w, c)
		}
	}
	pieceUses, cont := 0, 0
	for _, ids := range enc.EncodeAll(texts, 1) {
		for _, id := range ids {
			w := enc.Vocab.Words[id]
			if isPiece[w] && counts[w] < SubwordMinCount {
				pieceUses++
				if strings.HasPrefix(w, "##") {
					cont++
				}
			}
		}
	}
	if pieceUses == 0 || cont == 0 {
		t.Errorf("the training texts use subword pieces %d times (%d continuations): the pieces would never train", pieceUses, cont)
	}
	t.Logf("%d words, %d seen once; pieces used %d times in training (%d continuation pieces)", len(counts), countOnce(counts), pieceUses, cont)
}

func countOnce(c map[string]int) int {
	n := 0
	for _, v := range c {
		if v == 1 {
			n++
		}
	}
	return n
}
