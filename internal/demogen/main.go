package main

//go:generate go run . -equal-rates -out ../../testdata/demo-equal

import (
	"bytes"
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"log"
	"os"
	"path/filepath"

	"telltale/internal/atomicfile"
)

func main() {
	log.SetFlags(0)
	log.SetPrefix("demogen: ")
	out := flag.String("out", "testdata/demo", "folder to write train.csv, test.csv and README.md into")
	equal := flag.Bool("equal-rates", false, "plant both cues in the test split at the training split's rates (the variant in testdata/demo-equal)")
	flag.Parse()
	if flag.NArg() != 0 {
		fmt.Fprintln(os.Stderr, "usage: demogen [-equal-rates] [-out DIR]")
		os.Exit(2)
	}
	if err := write(*out, *equal); err != nil {
		log.Fatal(err)
	}
}

// write generates the corpus (the equal-rates variant when equalRates) and
// writes its three files into dir, each atomically.
func write(dir string, equalRates bool) error {
	c := generate(equalRates)
	files := []struct {
		name string
		data func() ([]byte, error)
	}{
		{"train.csv", func() ([]byte, error) { return encodeCSV(c.Train) }},
		{"test.csv", func() ([]byte, error) { return encodeCSV(c.Test) }},
		{"README.md", func() ([]byte, error) { return []byte(readme(c)), nil }},
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, f := range files {
		b, err := f.data()
		if err != nil {
			return fmt.Errorf("%s: %w", f.name, err)
		}
		err = atomicfile.Write(filepath.Join(dir, f.name), func(w io.Writer) error { _, err := w.Write(b); return err })
		if err != nil {
			return err
		}
	}
	return nil
}

// encodeCSV writes the header "text,label" and one record per example with
// RFC 4180 quoting.
func encodeCSV(xs []example) ([]byte, error) {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	if err := w.Write([]string{"text", "label"}); err != nil {
		return nil, err
	}
	for _, x := range xs {
		if err := w.Write([]string{x.Text, x.Label}); err != nil {
			return nil, err
		}
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}
