// Package corpus reads labeled text, checks it, splits it, tokenizes it and
// builds the vocabulary the classifier is trained on.
//
// # Reading
//
// Load reads a CSV or TSV file with a header row, a JSON Lines file (one
// object per line), or a folder with one sub-folder per label holding one
// text file per example (.txt or no extension; hidden entries and other
// files such as .json twins are skipped with a warning). Stream reads the
// same formats with constant memory. The text and label columns are named
// in Options or detected from common names.
//
// Bad input is never accepted silently: malformed quoting, a wrong
// delimiter, a missing column, an empty file, a single label, an empty
// label, NUL bytes, UTF-16, invalid UTF-8 and records longer than
// 8×MaxTextBytes are errors that name the file, the line and the fix, and
// wrap a sentinel (ErrFormat, ErrColumn, ErrEmpty, ErrEncoding, ErrLabel,
// ErrTooLong). Empty texts are skipped and texts longer than MaxTextBytes
// (default 1 MiB) are truncated, each with a Warning. A UTF-8 byte order
// mark and CRLF line ends are accepted. Nothing on disk is modified.
//
// Write writes examples as a CSV, TSV or JSON Lines file with the columns
// text and label, which Load reads back to the same texts and labels.
//
// # Splitting and checking
//
// Dataset.Split makes a stratified, seeded split; LabelIndex maps labels to
// class indexes and names any example whose label the training split lacks.
// Summarize reports examples per label, class balance, vocabulary size,
// token-length percentiles and exact and near-exact duplicates within and
// across the splits (train/test leaks).
//
// # Tokens and vocabulary
//
// A Tokenizer splits at white space and around punctuation and symbols
// with github.com/sugarme/tokenizer, then normalizes each token (NFKC,
// control and format characters removed, optional lower-casing). Every
// Token keeps byte offsets into the original text: text[Start:End] is its
// source. BuildVocab makes the word vocabulary (PAD, UNK, then words by
// count, ties by word). Optionally TrainSubword learns subword pieces on the
// training split and TokenizeFor splits unknown words into them; TrainEncoder
// then leaves the words seen once out of the word list, so they are split in
// the training texts too and the pieces' vectors are trained. Or a
// tokenizer file in the library's JSON format replaces the built-in rule.
//
//	train, _, err := corpus.Load("tickets.csv", corpus.Options{})
//	if err != nil {
//		log.Fatal(err) // e.g. corpus: tickets.csv line 7: empty label: …
//	}
//	train, test := train.Split(0.2, 1)
//	tok, _ := corpus.NewTokenizer(corpus.TokenizerConfig{Lower: true})
//	vocab := corpus.BuildVocab(tok, train.Texts(), 2, 20000)
//	ids := vocab.Encode(tok.Tokenize(test.Examples[0].Text))
package corpus
