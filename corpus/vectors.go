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

	"telltale/internal/inputfile"
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

// vectorBlock is the size of the blocks of whole lines handed to the parsers.
const vectorBlock = 4 << 20

// ReadVectors reads word vectors in the common plain-text layout: an
// optional first line "COUNT DIM", then one word and its numbers per line,
// separated by spaces or tabs. A path ending in .gz is decompressed. When
// keep is not nil, only words for which it returns true are kept (the others
// are not parsed, which makes reading a large file for a small vocabulary
// fast); keep is called from several goroutines at once. Later duplicates of
// a word are ignored. Blocks of lines are parsed in parallel.
func ReadVectors(path string, keep func(word string) bool) (*Vectors, error) {
	f, err := inputfile.Open(path)
	if err != nil {
		return nil, fmt.Errorf("corpus: %s: cannot open the vector file: %w", path, err)
	}
	defer f.Close()
	var r io.Reader = f
	if strings.HasSuffix(path, ".gz") {
		gz, err := gzip.NewReader(f)
		if err != nil {
			return nil, kindError(ErrVectors, "corpus: %s: not a gzip file (%v): decompress it or drop the .gz ending", path, err)
		}
		defer gz.Close()
		r = gz
	}
	br := bufio.NewReaderSize(r, maxVectorLine+1)
	// A byte order mark would otherwise become part of the first word.
	if err := skipBOM(br, path); err != nil {
		return nil, err
	}
	head, err := readVectorHead(path, br)
	if err != nil {
		return nil, err
	}
	order, wait := streamVectorBlocks(path, br, head, keep)
	v := &Vectors{Dim: head.dim}
	if head.count > 0 {
		v.reserve(head.count, reservable(f, r != io.Reader(f)))
	}
	firstErr := v.collect(order)
	if err := wait(); err != nil && firstErr == nil {
		firstErr = err
	}
	if firstErr != nil {
		return nil, firstErr
	}
	return v, nil
}

// vectorHead is what the first line of a vector file tells.
type vectorHead struct {
	dim, count int
	startLine  int    // line number of the first vector line
	first      []byte // the first line when it is a vector (a copy), else nil
}

// readVectorHead reads the first line from br, which is at the start of the
// file path: either the header "COUNT DIM" or the first vector, whose
// number of fields gives the dimension.
func readVectorHead(path string, br *bufio.Reader) (vectorHead, error) {
	first, err := br.ReadSlice('\n')
	if errors.Is(err, bufio.ErrBufferFull) {
		return vectorHead{}, kindError(ErrVectors, "corpus: %s line 1: line longer than %d bytes: is this a word-vector file?", path, maxVectorLine)
	}
	if err != nil && err != io.EOF {
		return vectorHead{}, fmt.Errorf("corpus: %s: reading: %w", path, err)
	}
	if len(bytes.TrimSpace(first)) == 0 && err == io.EOF {
		return vectorHead{}, kindError(ErrVectors, "corpus: %s: the vector file is empty", path)
	}
	first = append([]byte(nil), first...)
	h := vectorHead{startLine: 1}
	fields := strings.Fields(string(first))
	switch {
	case len(fields) == 2 && isCount(fields[0]) && isCount(fields[1]):
		h.dim, _ = strconv.Atoi(fields[1])
		h.count, _ = strconv.Atoi(fields[0])
		first, h.startLine = nil, 2
	case len(fields) < 2:
		return vectorHead{}, kindError(ErrVectors, "corpus: %s line 1: expected a word followed by its numbers", path)
	default:
		h.dim = len(fields) - 1
	}
	if h.dim < 1 || h.dim > 100000 {
		return vectorHead{}, kindError(ErrVectors, "corpus: %s line 1: dimension %d is out of range (1 to 100000)", path, h.dim)
	}
	h.first = first
	return h, nil
}

// vectorJob is one block of whole lines for a parser.
type vectorJob struct {
	first int // line number of the block's first line
	data  []byte
	out   chan vectorPart
}

// streamVectorBlocks cuts the rest of br, after head's line, into blocks of
// whole lines and parses them on GOMAXPROCS goroutines. It returns the
// blocks' results in file order (order, closed after the last block) and
// wait, which the caller calls once it has drained order: wait returns
// when every goroutine has ended, with the reading error, if any.
func streamVectorBlocks(path string, br *bufio.Reader, head vectorHead, keep func(string) bool) (order <-chan chan vectorPart, wait func() error) {
	workers := runtime.GOMAXPROCS(0)
	jobs := make(chan vectorJob, workers)
	ord := make(chan chan vectorPart, 2*workers)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for b := range jobs {
				b.out <- parseVectorBlock(path, b.data, b.first, head.dim, keep)
			}
		}()
	}
	readErr := make(chan error, 1)
	go func() {
		defer close(ord)
		defer close(jobs)
		readErr <- cutVectorBlocks(path, br, head, jobs, ord)
	}()
	return ord, func() error {
		wg.Wait()
		return <-readErr
	}
}

// cutVectorBlocks reads br to its end in blocks of about vectorBlock bytes,
// each cut after its last newline (the partial line is carried into the
// next block; head.first, when not nil, starts the first), and sends each
// block to jobs and its result channel to order, in file order.
func cutVectorBlocks(path string, br *bufio.Reader, head vectorHead, jobs chan<- vectorJob, order chan<- chan vectorPart) error {
	line := head.startLine
	buf := head.first
	send := func(data []byte) {
		out := make(chan vectorPart, 1)
		jobs <- vectorJob{first: line, data: data, out: out}
		order <- out
		line += bytes.Count(data, []byte{'\n'})
	}
	for {
		// Each block is read in place after the carried-over partial line.
		next := make([]byte, len(buf), len(buf)+vectorBlock)
		copy(next, buf)
		n, err := io.ReadFull(br, next[len(buf):cap(next)])
		buf = next[:len(buf)+n]
		if err == io.EOF || err == io.ErrUnexpectedEOF {
			if len(buf) > 0 {
				send(buf)
			}
			return nil
		}
		if err != nil {
			return fmt.Errorf("corpus: %s: reading: %w", path, err)
		}
		cut := bytes.LastIndexByte(buf, '\n')
		if cut < 0 {
			if len(buf) > maxVectorLine {
				return kindError(ErrVectors, "corpus: %s line %d: line longer than %d bytes: is this a word-vector file?", path, line, maxVectorLine)
			}
			continue
		}
		rest := buf[cut+1:]
		send(buf[:cut+1])
		buf = rest
	}
}

// reservable is how many numbers a vector file f may be trusted to hold
// before it is read: a number takes at least two bytes of text, and
// compressed text is taken to shrink at most 16 times (floats written as
// text compress far less), so a small file whose header claims millions of
// vectors reserves little; the rest grows as the vectors arrive. At most
// 2²⁷ numbers either way.
func reservable(f *os.File, compressed bool) int {
	most := 1 << 27
	st, err := f.Stat()
	if err != nil {
		return 1 << 20
	}
	size := int(st.Size())
	if compressed {
		size *= 16
	}
	return min(most, size/2)
}

// reserve sizes v for count vectors of v.Dim numbers, but for no more than
// most numbers in all (v.Dim ≥ 1, count > 0).
func (v *Vectors) reserve(count, most int) {
	dim := v.Dim
	n := most
	if count <= most/dim {
		n = count * dim
	}
	v.Words = make([]string, 0, n/dim)
	v.Data = make([]float32, 0, n)
}

// collect appends the parsed blocks from order to v in file order, keeping
// the first vector of each word, and returns the first block's error. It
// drains order to its end, so the parsers never block.
func (v *Vectors) collect(order <-chan chan vectorPart) error {
	dim := v.Dim
	seen := make(map[string]bool, cap(v.Words))
	var firstErr error
	for out := range order {
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
	return firstErr
}

// vectorPart is what one block of lines parses to.
type vectorPart struct {
	words []string
	data  []float32
	err   error
}

func isSep(c byte) bool { return c == ' ' || c == '\t' }

// parseVectorBlock parses whole lines; first is the line number of the
// first one.
func parseVectorBlock(path string, data []byte, first, dim int, keep func(string) bool) vectorPart {
	// A number takes at least two bytes (a digit and a separator).
	p := vectorPart{data: make([]float32, 0, min(len(data)/2, 1<<20))}
	n := first - 1
	for len(data) > 0 {
		n++
		var line []byte
		if i := bytes.IndexByte(data, '\n'); i >= 0 {
			line, data = data[:i], data[i+1:]
		} else {
			line, data = data, nil
		}
		if len(line) > maxVectorLine {
			p.err = kindError(ErrVectors, "corpus: %s line %d: line longer than %d bytes: is this a word-vector file?", path, n, maxVectorLine)
			return p
		}
		line = bytes.TrimSpace(line)
		if len(line) == 0 {
			continue
		}
		sp := bytes.IndexFunc(line, func(r rune) bool { return r == ' ' || r == '\t' })
		if sp < 0 {
			p.err = kindError(ErrVectors, "corpus: %s line %d: a word without numbers; each line must be a word and %d numbers", path, n, dim)
			return p
		}
		word := string(line[:sp])
		if keep != nil && !keep(word) {
			continue
		}
		rest := line[sp+1:]
		start := len(p.data)
		for {
			for len(rest) > 0 && isSep(rest[0]) {
				rest = rest[1:]
			}
			if len(rest) == 0 {
				break
			}
			end := 0
			for end < len(rest) && !isSep(rest[end]) {
				end++
			}
			x, ok := parseFloat32(rest[:end])
			if !ok {
				p.err = kindError(ErrVectors, "corpus: %s line %d: %s is not a finite number", path, n, quote(string(rest[:end])))
				return p
			}
			p.data = append(p.data, x)
			rest = rest[end:]
		}
		if got := len(p.data) - start; got != dim {
			p.err = kindError(ErrVectors, "corpus: %s line %d: %d numbers for %s, but the file's dimension is %d", path, n, got, quote(word), dim)
			return p
		}
		p.words = append(p.words, word)
	}
	return p
}

// pow10f holds the powers of ten that float32 represents exactly.
var pow10f = [...]float32{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10}

// parseFloat32 parses a decimal number to the nearest float32, as
// strconv.ParseFloat(s, 32) does, and reports whether it is a finite number.
// Plain decimals with at most 7 significant digits and a short fraction take
// the exact fast path of Clinger (1990, "How to Read Floating Point Numbers
// Accurately", PLDI): an integer below 2^24 and a power of ten up to 10^10
// are both exact in float32, so one correctly rounded division or product
// gives the correctly rounded result. Everything else goes to strconv.
func parseFloat32(s []byte) (float32, bool) {
	i, neg := 0, false
	if i < len(s) && (s[i] == '-' || s[i] == '+') {
		neg = s[i] == '-'
		i++
	}
	var mant uint32
	digits, frac := 0, 0
	seenDot, any := false, false
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			any = true
			if mant == 0 && c == '0' {
				if seenDot {
					frac++
				}
				continue
			}
			digits++
			if digits > 7 {
				return slowFloat32(s)
			}
			mant = mant*10 + uint32(c-'0')
			if seenDot {
				frac++
			}
		case c == '.' && !seenDot:
			seenDot = true
		default:
			return slowFloat32(s)
		}
	}
	if !any || frac >= len(pow10f) {
		return slowFloat32(s)
	}
	x := float32(mant) / pow10f[frac]
	if neg {
		x = -x
	}
	return x, true
}

func slowFloat32(s []byte) (float32, bool) {
	x, err := strconv.ParseFloat(string(s), 32)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, false
	}
	return float32(x), true
}

func isCount(s string) bool {
	n, err := strconv.Atoi(s)
	return err == nil && n >= 0
}
