package corpus

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"strconv"
	"strings"
	"sync"
)

// ErrVectors marks a malformed word-vector file.
var ErrVectors = errors.New("corpus: malformed word-vector file")

// Vectors is a table of pretrained word vectors.
type Vectors struct {
	Dim   int
	Words []string
	Data  []float32 // len(Words)*Dim, row i is the vector of Words[i]
}

// Vector returns the vector of entry i.
func (v *Vectors) Vector(i int) []float32 { return v.Data[i*v.Dim : (i+1)*v.Dim] }

// maxVectorLine bounds one line of a vector file (a 300-d vector in text is
// about 3 KB; 1 MiB leaves room for 30,000 dimensions).
const maxVectorLine = 1 << 20

// ReadVectors reads word vectors in the common plain-text layout: an
// optional first line "COUNT DIM", then one word and its numbers per line,
// separated by spaces. A path ending in .gz is decompressed. When keep is
// not nil, only words for which it returns true are kept (the others are not
// parsed, which makes reading a large file for a small vocabulary fast).
// Later duplicates of a word are ignored. Lines are parsed in parallel.
func ReadVectors(path string, keep func(word string) bool) (*Vectors, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("corpus: %s: cannot open the vector file: %w", path, err)
	}
	defer f.Close()
	var r io.Reader = f
	if strings.HasSuffix(path, ".gz") {
		gz, err := gzip.NewReader(f)
		if err != nil {
			return nil, fmt.Errorf("corpus: %s: not a gzip file (%v): decompress it or drop the .gz ending: %w", path, err, ErrVectors)
		}
		defer gz.Close()
		r = gz
	}
	br := bufio.NewReaderSize(r, 1<<20)

	type chunk struct {
		first int // line number of lines[0]
		lines [][]byte
	}
	type parsed struct {
		words []string
		data  []float32
		err   error
	}
	dim := 0
	lineNo := 0
	readLine := func() ([]byte, error) {
		line, err := br.ReadSlice('\n')
		if errors.Is(err, bufio.ErrBufferFull) {
			return nil, fmt.Errorf("corpus: %s line %d: line longer than %d bytes: is this a word-vector file?: %w", path, lineNo+1, maxVectorLine, ErrVectors)
		}
		if err == io.EOF && len(line) > 0 {
			err = nil
		}
		if err != nil {
			return nil, err
		}
		lineNo++
		return bytes.TrimRight(line, "\r\n"), nil
	}

	// The first line is either the header or the first vector.
	first, err := readLine()
	if err == io.EOF {
		return nil, fmt.Errorf("corpus: %s: the vector file is empty: %w", path, ErrVectors)
	}
	if err != nil {
		return nil, err
	}
	pending := [][]byte{}
	if fields := strings.Fields(string(first)); len(fields) == 2 && isCount(fields[0]) && isCount(fields[1]) {
		dim, _ = strconv.Atoi(fields[1])
	} else {
		if len(fields) < 2 {
			return nil, fmt.Errorf("corpus: %s line 1: expected a word followed by its numbers: %w", path, ErrVectors)
		}
		dim = len(fields) - 1
		pending = append(pending, append([]byte(nil), first...))
	}
	if dim < 1 || dim > 100000 {
		return nil, fmt.Errorf("corpus: %s line 1: dimension %d is out of range (1 to 100000): %w", path, dim, ErrVectors)
	}
	parse := func(c chunk) parsed {
		var p parsed
		for i, line := range c.lines {
			n := c.first + i
			line = bytes.TrimSpace(line)
			if len(line) == 0 {
				continue
			}
			sp := bytes.IndexByte(line, ' ')
			if sp < 0 {
				p.err = fmt.Errorf("corpus: %s line %d: a word without numbers; each line must be a word and %d numbers: %w", path, n, dim, ErrVectors)
				return p
			}
			word := string(line[:sp])
			if keep != nil && !keep(word) {
				continue
			}
			rest := line[sp+1:]
			start := len(p.data)
			for len(rest) > 0 {
				rest = bytes.TrimLeft(rest, " ")
				if len(rest) == 0 {
					break
				}
				end := bytes.IndexByte(rest, ' ')
				if end < 0 {
					end = len(rest)
				}
				x, err := strconv.ParseFloat(string(rest[:end]), 32)
				if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
					p.err = fmt.Errorf("corpus: %s line %d: %q is not a finite number: %w", path, n, rest[:end], ErrVectors)
					return p
				}
				p.data = append(p.data, float32(x))
				rest = rest[end:]
			}
			if got := len(p.data) - start; got != dim {
				p.err = fmt.Errorf("corpus: %s line %d: %d numbers for %q, but the file's dimension is %d: %w", path, n, got, word, dim, ErrVectors)
				return p
			}
			p.words = append(p.words, word)
		}
		return p
	}

	workers := runtime.GOMAXPROCS(0)
	resultQueue := make(chan chan parsed, 4*workers)
	var wg sync.WaitGroup
	type job struct {
		c   chunk
		out chan parsed
	}
	jobQ := make(chan job, workers)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobQ {
				j.out <- parse(j.c)
			}
		}()
	}
	// Reader: cut the file into chunks of lines and queue them in order.
	readErr := make(chan error, 1)
	go func() {
		defer close(resultQueue)
		defer close(jobQ)
		const chunkLines = 2048
		c := chunk{first: lineNo - len(pending) + 1, lines: pending}
		for {
			line, err := readLine()
			if err == io.EOF {
				break
			}
			if err != nil {
				readErr <- err
				return
			}
			c.lines = append(c.lines, append([]byte(nil), line...))
			if len(c.lines) == chunkLines {
				out := make(chan parsed, 1)
				jobQ <- job{c, out}
				resultQueue <- out
				c = chunk{first: lineNo + 1}
			}
		}
		if len(c.lines) > 0 {
			out := make(chan parsed, 1)
			jobQ <- job{c, out}
			resultQueue <- out
		}
		readErr <- nil
	}()
	v := &Vectors{Dim: dim}
	seen := map[string]bool{}
	var firstErr error
	for out := range resultQueue {
		p := <-out
		if firstErr != nil {
			continue
		}
		if p.err != nil {
			firstErr = p.err
			continue
		}
		for i, w := range p.words {
			if seen[w] {
				continue
			}
			seen[w] = true
			v.Words = append(v.Words, w)
			v.Data = append(v.Data, p.data[i*dim:(i+1)*dim]...)
		}
	}
	wg.Wait()
	if err := <-readErr; err != nil && firstErr == nil {
		firstErr = err
	}
	if firstErr != nil {
		return nil, firstErr
	}
	return v, nil
}

func isCount(s string) bool {
	n, err := strconv.Atoi(s)
	return err == nil && n >= 0
}
