package main

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"runtime"
	"strconv"
	"sync"
	"unicode/utf8"

	"telltale/cnn"
	"telltale/corpus"
)

// Predict as a stream: one goroutine reads the texts in batches, every
// core encodes and labels whole batches and formats their output lines,
// and the calling goroutine writes the batches in their input order, one
// write per batch. At most 2·workers+2 batches exist at once, so memory
// does not grow with the input.

// Batch bounds: a batch ends at batchTexts texts or once it holds
// batchBytes bytes of text.
const (
	batchTexts = 256
	batchBytes = 1 << 20
)

// textBatch is a run of consecutive texts and what predict makes of them.
type textBatch struct {
	texts []text
	buf   []byte // the batch's standard-input lines, one after the other
	ids   []int32
	view  [][]int32 // each text's ids, slices of ids
	probs []float32 // Classes per text
	ends  []int     // where each text's ids end in ids
	lines []int     // the line number of each standard-input line in buf
	out   []byte    // the batch's output lines
	err   error     // from formatting the output
	done  chan struct{}
}

// batchSource fills b.texts with the next texts (b.texts and b.buf come
// reset) and reports false at the end of the input; an error stops the
// stream. It is called from one goroutine.
type batchSource func(b *textBatch) (more bool, err error)

// predictStream labels every text of next with m and enc and writes the
// lines of format (one text's output appended to dst) to w in input
// order; keep, when not nil, is called in input order with every text and
// its probabilities (which it must copy to keep), after the batch's lines
// are written.
func predictStream(ctx context.Context, next batchSource, m *cnn.Model, enc *corpus.Encoder, w io.Writer,
	format func(dst []byte, t text, probs []float32) ([]byte, error), keep func(t text, probs []float32)) error {
	ctx, cancel := context.WithCancel(ctx)
	workers := runtime.GOMAXPROCS(0)
	s := &stream{free: make(chan *textBatch, 2*workers+2)}
	for range cap(s.free) {
		s.free <- &textBatch{}
	}
	s.work = make(chan *textBatch, cap(s.free))
	s.order = make(chan *textBatch, cap(s.free))
	go s.read(ctx, next)
	var wg sync.WaitGroup
	for range workers {
		wg.Go(func() { s.labelAll(ctx, m, enc, format) })
	}
	// The reader may still be blocked on its input (a terminal): it ends
	// with the input, as eachLine's does; the workers end here.
	defer func() {
		cancel()
		wg.Wait()
	}()
	return s.write(ctx, w, m.Config.Classes, keep)
}

// stream is predictStream's batches on their way: free ones, those to
// label, and all of them in input order for the writer.
type stream struct {
	free, work, order chan *textBatch
	readErr           error // set by read before it closes order
}

// read fills free batches from next and hands each to the labelers and
// to the writer; it ends with the input, a read error or ctx.
func (s *stream) read(ctx context.Context, next batchSource) {
	defer close(s.work)
	defer close(s.order)
	for {
		var b *textBatch
		select {
		case b = <-s.free:
		case <-ctx.Done():
			return
		}
		b.texts, b.buf, b.err, b.done = b.texts[:0], b.buf[:0], nil, make(chan struct{})
		more, err := next(b)
		if len(b.texts) > 0 { // the lines before a read error are labeled and written too
			s.work <- b
			s.order <- b
		}
		if err != nil {
			s.readErr = err
			return
		}
		if !more {
			return
		}
	}
}

// labelAll labels batches until there are no more or ctx ends.
func (s *stream) labelAll(ctx context.Context, m *cnn.Model, enc *corpus.Encoder, format func([]byte, text, []float32) ([]byte, error)) {
	p := m.NewPredictor()
	for {
		select {
		case b, ok := <-s.work:
			if !ok {
				return
			}
			b.label(p, m, enc, format)
			close(b.done)
		case <-ctx.Done():
			return
		}
	}
}

// write writes the batches' lines to w in input order, calls keep with
// each text and its probabilities (classes per text), and frees the batch.
func (s *stream) write(ctx context.Context, w io.Writer, classes int, keep func(t text, probs []float32)) error {
	for {
		var b *textBatch
		var ok bool
		select {
		case b, ok = <-s.order:
		case <-ctx.Done():
			return ctx.Err()
		}
		if !ok {
			// The reader has returned, so readErr is set if it failed.
			if s.readErr != nil {
				return s.readErr
			}
			return ctx.Err()
		}
		select {
		case <-b.done:
		case <-ctx.Done():
			return ctx.Err()
		}
		if b.err != nil {
			return b.err
		}
		if _, err := w.Write(b.out); err != nil {
			return err
		}
		if keep != nil {
			for i, t := range b.texts {
				keep(t, b.probs[i*classes:(i+1)*classes])
			}
		}
		s.free <- b
	}
}

// label encodes, labels and formats the texts of b with p.
func (b *textBatch) label(p *cnn.Predictor, m *cnn.Model, enc *corpus.Encoder, format func([]byte, text, []float32) ([]byte, error)) {
	if m.Config.Chars != nil {
		// A model with a character layer gives the batch's unseen words
		// rows of their own (cnn.Model.WithUnseen); other models skip this.
		texts := make([]string, len(b.texts))
		for i, t := range b.texts {
			texts[i] = t.Text
		}
		mu, encU, err := m.WithUnseen(enc, texts)
		if err != nil {
			b.err = err
			return
		}
		if mu != m {
			m, enc, p = mu, encU, mu.NewPredictor()
		}
	}
	b.ids, b.view, b.ends = b.ids[:0], b.view[:0], b.ends[:0]
	for _, t := range b.texts {
		b.ids = enc.AppendIDs(b.ids, t.Text)
		b.ends = append(b.ends, len(b.ids))
	}
	lo := 0
	for _, hi := range b.ends {
		b.view = append(b.view, b.ids[lo:hi:hi])
		lo = hi
	}
	c := m.Config.Classes
	b.probs = grow(b.probs, len(b.texts)*c)
	p.Probs(b.view, b.probs)
	b.out = b.out[:0]
	for i, t := range b.texts {
		if b.out, b.err = format(b.out, t, b.probs[i*c:(i+1)*c]); b.err != nil {
			return
		}
	}
}

func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}

// sliceBatches is a batchSource over texts held in memory.
func sliceBatches(texts []text) batchSource {
	i := 0
	return func(b *textBatch) (bool, error) {
		size := 0
		for i < len(texts) && len(b.texts) < batchTexts && size < batchBytes {
			b.texts = append(b.texts, texts[i])
			size += len(texts[i].Text)
			i++
		}
		return i < len(texts), nil
	}
}

// lineBatches is a batchSource over the lines of r (a line ends at "\n",
// and a "\r" before it is dropped, as bufio.ScanLines does), one text per
// line so that outputs pair with input lines: each text has its line
// number, and a line of white space only is a Blank text. A UTF-8 byte
// order mark at the start is dropped; invalid UTF-8 is replaced by U+FFFD,
// the first time with a warning on warn (when not nil) naming the line. A
// batch ends early when the lines read so far are all r has delivered, so
// that lines typed or piped one by one are labeled as they come. A line
// over limit bytes (--max-text-bytes; 0: no limit) is cut to it at a
// character's start, with a warning naming the line, as --data's texts
// are (the first maxCutWarnings such lines). Each batch's lines are copied
// once into its buffer and become one string, which the batch's texts are
// substrings of.
func lineBatches(r io.Reader, warn io.Writer, limit int) batchSource {
	lr := &lineReader{r: bufio.NewReaderSize(r, 256<<10)}
	warned, cuts := false, 0
	return func(b *textBatch) (bool, error) {
		b.ends, b.lines = b.ends[:0], b.lines[:0]
		for len(b.ends) < batchTexts && len(b.buf) < batchBytes {
			line, err := lr.next()
			if err == io.EOF {
				b.addLines()
				return false, nil
			}
			if err != nil {
				b.addLines() // the lines read before it
			}
			if errors.Is(err, bufio.ErrTooLong) {
				return false, fmt.Errorf("standard input line %d is longer than 16 MiB, the limit of a line: cut the lines shorter, "+
					"e.g. with cut -b1-1000000 (the model reads no more of a text than the --max-len tokens it was trained with, 400 by default)", lr.n+1)
			}
			if err != nil {
				return false, fmt.Errorf("reading standard input line %d: %w", lr.n+1, err)
			}
			if lr.n == 1 {
				line = bytes.TrimPrefix(line, []byte("\xef\xbb\xbf"))
			}
			if !utf8.Valid(line) {
				line = bytes.ToValidUTF8(line, []byte("\uFFFD"))
				if !warned && warn != nil {
					warned = true
					fmt.Fprintf(warn, "warning: standard input line %d: invalid UTF-8 replaced by U+FFFD (later lines are not reported; "+
						"if the input is Latin-1, convert it to UTF-8 first: iconv -f latin1 -t utf-8)\n", lr.n)
				}
			}
			if limit > 0 && len(line) > limit {
				cuts++
				warnCut(warn, lr.n, len(line), limit, cuts)
				line = line[:cutAt(line, limit)]
			}
			if len(bytes.TrimSpace(line)) > 0 {
				b.buf = append(b.buf, line...)
			}
			b.ends = append(b.ends, len(b.buf))
			b.lines = append(b.lines, lr.n)
			if lr.r.Buffered() == 0 {
				break // the next read may wait for more input
			}
		}
		b.addLines()
		return true, nil
	}
}

// maxCutWarnings is how many lines of standard input cut to
// --max-text-bytes are warned of one by one.
const maxCutWarnings = 10

// warnCut warns on warn (when not nil) that standard input line n, of size
// bytes, was cut to limit bytes, in the words of --data's warning; the
// cuts-th cut, past maxCutWarnings, is not reported.
func warnCut(warn io.Writer, n, size, limit, cuts int) {
	if warn == nil || cuts > maxCutWarnings {
		return
	}
	later := ""
	if cuts == maxCutWarnings {
		later = "; later lines cut are not reported"
	}
	fmt.Fprintf(warn, "warning: standard input line %d: text of %d bytes truncated to %d bytes (raise --max-text-bytes to keep more%s)\n", n, size, limit, later)
}

// cutAt is the length of line cut to at most limit bytes at the start of
// a character, as corpus cuts --data's texts.
func cutAt(line []byte, limit int) int {
	cut := limit
	for cut > 0 && !utf8.RuneStart(line[cut]) {
		cut--
	}
	return cut
}

// addLines makes b's texts of the lines in b.buf that end at b.ends, with
// their line numbers b.lines; an empty one is a blank line.
func (b *textBatch) addLines() {
	all := string(b.buf)
	lo := 0
	for i, hi := range b.ends {
		b.texts = append(b.texts, text{Text: all[lo:hi], Line: b.lines[i], Blank: lo == hi})
		lo = hi
	}
}

// lineReader reads lines of up to maxStdinLine bytes.
type lineReader struct {
	r    *bufio.Reader
	long []byte
	n    int // lines returned so far
}

// next returns the next line without its end, valid until the next call;
// io.EOF after the last line, bufio.ErrTooLong for a line over
// maxStdinLine bytes.
func (lr *lineReader) next() ([]byte, error) {
	line, err := lr.r.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		lr.long = append(lr.long[:0], line...)
		for err == bufio.ErrBufferFull {
			if len(lr.long) > maxStdinLine {
				return nil, bufio.ErrTooLong
			}
			line, err = lr.r.ReadSlice('\n')
			lr.long = append(lr.long, line...)
		}
		line = lr.long
	}
	if err != nil && (err != io.EOF || len(line) == 0) {
		return nil, err
	}
	if len(line) > maxStdinLine {
		return nil, bufio.ErrTooLong
	}
	lr.n++
	line = bytes.TrimSuffix(line, []byte{'\n'})
	return bytes.TrimSuffix(line, []byte{'\r'}), nil
}

// appendTextLine appends predict's plain line for one text: the label, each
// class's probability to 3 decimals and the text's start on one line.
func appendTextLine(dst []byte, labels []string, t text, probs []float32) []byte {
	dst = append(dst, labels[argmax(probs)]...)
	dst = append(dst, '\t')
	for c, l := range labels {
		if c > 0 {
			dst = append(dst, ' ')
		}
		dst = append(dst, l...)
		dst = append(dst, '=')
		dst = strconv.AppendFloat(dst, float64(probs[c]), 'f', 3, 32) // as fmt's %.3f of a float32
	}
	dst = append(dst, '\t')
	dst = append(dst, oneLine(t.Text, 60)...)
	return append(dst, '\n')
}
