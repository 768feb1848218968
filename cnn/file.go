package cnn

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"slices"
	"unsafe"

	"telltale/corpus"
	"telltale/internal/atomicfile"
	"telltale/internal/inputfile"
	"telltale/internal/version"
	"telltale/linear"
)

// The model file is one self-checking binary file:
//
//	magic      8 bytes  "TTLCNN\r\n"
//	version    uint32   FormatVersion
//	headerLen  uint64   length of the JSON header
//	header     JSON     config, labels, vocabulary, tokenizer, info, mask
//	nWeights   uint64   number of float32 weights that follow
//	weights    nWeights × float32: Emb, then W and B of each bank in order,
//	           then OutW, OutB, then (version 3, a model with a character
//	           layer) the layer's character vectors, filters and biases,
//	           then (version 4, a model with the wide path) the word-weight
//	           table Wide, VocabSize × Classes laid out [word][class], then
//	           (version 5, a model with bigram weights) the bigram table
//	           WideBigram, nBigrams × Classes laid out [bigram][class]
//	nBigrams   uint64   number of bigram keys that follow (version 5)
//	bigrams    nBigrams × uint64: Model.Bigrams, sorted (version 5)
//	nBaseline  uint64   number of float64 baseline weights that follow (version 2)
//	baseline   nBaseline × float64: the linear baseline's IDF, Coef,
//	           Intercept (linear.Model.Weights); its other parts are in the
//	           header under "baseline" (version 2)
//	crc        uint32   CRC-32 (Castagnoli) of everything before it
//
// All integers and floats are little-endian. Version 1 files (no baseline
// section) still load. A file is written as the oldest version that holds
// the model, so older programs still read what they can: a model with
// neither a character layer nor the wide path as version 2, one with a
// character layer as version 3, one with the wide path as version 4, one
// with bigram weights in it as version 5; a
// program older than the version refuses the file with "update telltale".
// The character parts of Emb are stored but recomputed from the layer on
// loading.

// FormatVersion is the newest model file version this package writes and
// reads.
const FormatVersion = 5

// fileVersion is the version m is written as.
func fileVersion(m *Model) uint32 {
	switch {
	case m.Config.WideBigrams:
		return 5
	case m.Config.Wide:
		return 4
	case m.Config.Chars != nil:
		return 3
	}
	return 2
}

const fileMagic = "TTLCNN\r\n"

var crcTable = crc32.MakeTable(crc32.Castagnoli)

// ErrNotModel is returned by Load for a file that is not a model file.
var ErrNotModel = errors.New("not a telltale model file")

type fileHeader struct {
	Config    Config                 `json:"config"`
	Labels    []string               `json:"labels"`
	Vocab     []string               `json:"vocab"`
	Tokenizer corpus.TokenizerConfig `json:"tokenizer"`
	Info      Info                   `json:"info"`
	Masked    []int                  `json:"masked,omitempty"` // indices of masked filters
	Baseline  *linear.Model          `json:"baseline,omitempty"`
}

// numWeights is the number of float32 values the model file stores for
// cfg with nBigrams bigram keys (0 without Config.WideBigrams).
func numWeights(cfg Config, nBigrams int) int {
	n := cfg.VocabSize*cfg.Dim + cfg.Classes*cfg.NumFilters() + cfg.Classes
	for _, w := range cfg.Widths {
		n += cfg.Filters*w*cfg.Dim + cfg.Filters
	}
	if cfg.Chars != nil {
		n += cfg.Chars.numWeights()
	}
	if cfg.Wide {
		n += cfg.VocabSize * cfg.Classes
	}
	if cfg.WideBigrams {
		n += nBigrams * cfg.Classes
	}
	return n
}

// Save writes m to path atomically: it writes a temporary file in the same
// directory, syncs it and renames it over path, so a crash never leaves a
// partial model file behind. The file records the telltale version that
// wrote it (Info.Version; m itself is not changed).
func (m *Model) Save(path string) (err error) {
	if err := m.checkShapes(); err != nil {
		return err
	}
	if err := atomicfile.Write(path, m.encode); err != nil {
		return fmt.Errorf("cnn: saving model: %w", err)
	}
	return nil
}

// encode writes the model file format to w.
func (m *Model) encode(w io.Writer) error {
	h := fileHeader{Config: m.Config, Labels: m.Labels, Vocab: m.Vocab, Tokenizer: m.Tokenizer, Info: m.Info, Baseline: m.Baseline}
	h.Info.Version = version.String() // the file records the version that wrote it
	for g, on := range m.Masked {
		if on {
			h.Masked = append(h.Masked, g)
		}
	}
	js, err := json.Marshal(h)
	if err != nil {
		return err
	}
	crc := crc32.New(crcTable)
	bw := &errWriter{w: io.MultiWriter(w, crc)}
	bw.write([]byte(fileMagic))
	bw.u32(fileVersion(m))
	bw.u64(uint64(len(js)))
	bw.write(js)
	bw.u64(uint64(numWeights(m.Config, len(m.Bigrams))))
	bw.floats(m.Emb)
	for _, c := range m.Convs {
		bw.floats(c.W)
		bw.floats(c.B)
	}
	bw.floats(m.OutW)
	bw.floats(m.OutB)
	if l := m.Char; l != nil {
		bw.floats(l.Emb)
		bw.floats(l.W)
		bw.floats(l.B)
	}
	bw.floats(m.Wide)       // nil without the wide path
	bw.floats(m.WideBigram) // nil without bigram weights
	if fileVersion(m) >= 5 {
		bw.u64(uint64(len(m.Bigrams)))
		bw.uint64s(m.Bigrams)
	}
	var base []float64
	if m.Baseline != nil {
		base = m.Baseline.Weights()
	}
	bw.u64(uint64(len(base)))
	bw.floats64(base)
	if bw.err != nil {
		return bw.err
	}
	var sum [4]byte
	binary.LittleEndian.PutUint32(sum[:], crc.Sum32())
	_, err = w.Write(sum[:])
	return err
}

type errWriter struct {
	w   io.Writer
	err error
	buf [1 << 14]byte
}

func (e *errWriter) write(b []byte) {
	if e.err == nil {
		_, e.err = e.w.Write(b)
	}
}

func (e *errWriter) u32(v uint32) {
	var b [4]byte
	binary.LittleEndian.PutUint32(b[:], v)
	e.write(b[:])
}

func (e *errWriter) u64(v uint64) {
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], v)
	e.write(b[:])
}

func (e *errWriter) floats(x []float32) {
	for len(x) > 0 {
		n := min(len(x), len(e.buf)/4)
		for i, v := range x[:n] {
			binary.LittleEndian.PutUint32(e.buf[4*i:], math.Float32bits(v))
		}
		e.write(e.buf[:4*n])
		x = x[n:]
	}
}

func (e *errWriter) uint64s(x []uint64) {
	for len(x) > 0 {
		n := min(len(x), len(e.buf)/8)
		for i, v := range x[:n] {
			binary.LittleEndian.PutUint64(e.buf[8*i:], v)
		}
		e.write(e.buf[:8*n])
		x = x[n:]
	}
}

func (e *errWriter) floats64(x []float64) {
	for len(x) > 0 {
		n := min(len(x), len(e.buf)/8)
		for i, v := range x[:n] {
			binary.LittleEndian.PutUint64(e.buf[8*i:], math.Float64bits(v))
		}
		e.write(e.buf[:8*n])
		x = x[n:]
	}
}

// Load reads a model file written by Save. A file that is not a model, is
// truncated or damaged, is from a newer format version, or whose vocabulary
// and weights disagree gives an error naming the file and the problem.
func Load(path string) (*Model, error) {
	return load(path, true)
}

// LoadWithoutBaseline reads a model file as Load does, with every check of
// the CNN's part, but leaves out the linear baseline the file may carry
// (m.Baseline is nil): for commands that only run the CNN, which then do
// not pay for parsing and indexing the baseline's n-grams. The baseline's
// bytes are still covered by the file's checksum. Save on such a model
// writes a file without the baseline.
func LoadWithoutBaseline(path string) (*Model, error) {
	return load(path, false)
}

func load(path string, withBaseline bool) (*Model, error) {
	data, err := inputfile.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("cnn: loading model: %w", err)
	}
	m, err := decode(data, withBaseline)
	if err != nil {
		return nil, fmt.Errorf("cnn: model file %s: %w", path, err)
	}
	return m, nil
}

// headerIn is the header as decode reads it: the baseline's JSON is kept
// as it is and parsed only when the caller wants the baseline.
type headerIn struct {
	fileHeader
	Baseline json.RawMessage `json:"baseline,omitempty"`
}

// decode parses a whole model file. It never allocates more than a small
// multiple of len(data). The checks run in a fixed order (framing and
// checksum, header, sizes, weights, baseline), so a damaged file always
// gets the same error.
func decode(data []byte, withBaseline bool) (*Model, error) {
	f, err := splitFile(data)
	if err != nil {
		return nil, err
	}
	// The checksum runs beside the decoding; its error, when there is one,
	// is the one returned, as if it had been checked first.
	sum := make(chan error, 1)
	go func() { sum <- checkSum(data) }()
	m, err := decodeParts(f, len(data), withBaseline)
	if sumErr := <-sum; sumErr != nil {
		return nil, sumErr
	}
	return m, err
}

// decodeParts decodes the sections of a model file of fileLen bytes that
// splitFile returned (see decode).
func decodeParts(f fileParts, fileLen int, withBaseline bool) (*Model, error) {
	var hi headerIn
	if !decodeHeaderFast(f.header, &hi) {
		dec := json.NewDecoder(bytes.NewReader(f.header))
		if err := dec.Decode(&hi); err != nil {
			return nil, fmt.Errorf("header: %v: the file is corrupted", err)
		}
	}
	h := &hi.fileHeader
	if len(hi.Baseline) > 0 && !bytes.Equal(hi.Baseline, []byte("null")) && withBaseline {
		if err := json.Unmarshal(hi.Baseline, &h.Baseline); err != nil {
			return nil, fmt.Errorf("header: baseline: %v: the file is corrupted", err)
		}
	}
	if err := checkHeader(h, f, fileLen); err != nil {
		return nil, err
	}
	cfg := h.Config
	m := &Model{Config: cfg, Labels: h.Labels, Vocab: h.Vocab, Tokenizer: h.Tokenizer, Info: h.Info}
	if len(h.Masked) > 0 {
		var err error
		if m.Masked, err = maskedFilters(h.Masked, cfg.NumFilters()); err != nil {
			return nil, err
		}
	}
	if err := m.readWeights(f.weights, f.bigrams); err != nil {
		return nil, err
	}
	if withBaseline {
		if err := setBaseline(m, h.Baseline, f.baseline); err != nil {
			return nil, err
		}
	} else if (len(hi.Baseline) == 0 || bytes.Equal(hi.Baseline, []byte("null"))) && len(f.baseline) > 0 {
		return nil, fmt.Errorf("%d baseline weights but no baseline in the header: the file is damaged", len(f.baseline)/8)
	}
	for _, v := range m.Emb[:cfg.Dim] {
		if v != 0 {
			return nil, fmt.Errorf("the PAD embedding is not zero: the file is damaged")
		}
	}
	m.FillChars() // a token's vector is computed from the token, never read
	return m, nil
}

// fileParts are the sections of a model file whose framing and checksum
// splitFile has checked; each slice aliases the file's bytes.
type fileParts struct {
	version  uint32
	header   []byte // the JSON header
	nw       uint64 // float32 weights announced
	weights  []byte // 4*nw bytes
	bigrams  []byte // the bigram keys, 8 bytes each (version 5)
	baseline []byte // the baseline's float64 weights, 8 bytes each
}

// splitFile checks the magic bytes, the version and that every announced
// length fits in data, and returns the sections (checkSum checks the
// checksum). Nothing in the header is read yet.
func splitFile(data []byte) (fileParts, error) {
	const fixed = 8 + 4 + 8
	var f fileParts
	if len(data) < len(fileMagic) || string(data[:len(fileMagic)]) != fileMagic {
		return f, fmt.Errorf("%w (wrong magic bytes): give a file written by telltale train", ErrNotModel)
	}
	if len(data) < fixed {
		return f, fmt.Errorf("truncated after %d bytes: the file is incomplete, save or copy it again", len(data))
	}
	version := binary.LittleEndian.Uint32(data[8:])
	if version > FormatVersion {
		return f, fmt.Errorf("format version %d is newer than this program reads (%d): update telltale", version, FormatVersion)
	} else if version == 0 {
		return f, fmt.Errorf("format version 0 is invalid: the file is damaged")
	}
	hl := binary.LittleEndian.Uint64(data[12:])
	rest := uint64(len(data) - fixed)
	if hl > rest || rest-hl < 8+4 {
		return f, fmt.Errorf("truncated (header of %d bytes, %d bytes left): the file is incomplete, save or copy it again", hl, rest)
	}
	off := fixed + int(hl)
	nw := binary.LittleEndian.Uint64(data[off:])
	off += 8
	end := len(data) - 4 // where the checksum starts
	if left := uint64(end-off) / 4; nw > left {
		return f, fmt.Errorf("truncated (%d weights announced, room for %d): the file is incomplete, save or copy it again", nw, left)
	}
	wEnd := off + 4*int(nw)
	keys := wEnd // where the bigram keys start
	if version >= 5 {
		if end-wEnd < 8 {
			return f, fmt.Errorf("truncated (no bigram section after the weights): the file is incomplete, save or copy it again")
		}
		nk := binary.LittleEndian.Uint64(data[wEnd:])
		if left := uint64(end-wEnd-8) / 8; nk > left {
			return f, fmt.Errorf("truncated or corrupted (%d bigrams announced, room for %d): the file is incomplete, save or copy it again", nk, left)
		}
		keys = wEnd + 8
		wEnd = keys + 8*int(nk)
	}
	var nb uint64
	bEnd := wEnd
	if version >= 2 {
		if end-wEnd < 8 {
			return f, fmt.Errorf("truncated (no baseline section after the weights): the file is incomplete, save or copy it again")
		}
		nb = binary.LittleEndian.Uint64(data[wEnd:])
		if left := uint64(end-wEnd-8) / 8; nb > left {
			// The count sits just before the checksum, where both a cut and
			// a damaged byte land.
			return f, fmt.Errorf("truncated or corrupted (%d baseline weights announced, room for %d): the file is incomplete, save or copy it again", nb, left)
		}
		bEnd = wEnd + 8 + 8*int(nb)
	}
	if bEnd != end {
		return f, fmt.Errorf("damaged: %d bytes after the weights: the file is corrupted", end-bEnd)
	}
	return fileParts{
		version:  version,
		header:   data[fixed : fixed+int(hl)],
		nw:       nw,
		weights:  data[off : off+4*int(nw)],
		bigrams:  data[keys:wEnd],
		baseline: data[bEnd-8*int(nb) : bEnd],
	}, nil
}

// checkSum checks the checksum of a model file whose framing splitFile
// has accepted.
func checkSum(data []byte) error {
	body := data[:len(data)-4]
	if got, want := crc32.Checksum(body, crcTable), binary.LittleEndian.Uint32(data[len(data)-4:]); got != want {
		return fmt.Errorf("checksum mismatch (%08x, stored %08x): the file is corrupted, retrain or restore it", got, want)
	}
	return nil
}

// checkHeader checks that the decoded header h is valid, that the weights
// its sizes call for fit in a file of fileLen bytes and equal those f
// announces, and that its vocabulary and labels match them.
func checkHeader(h *fileHeader, f fileParts, fileLen int) error {
	cfg := h.Config
	if err := cfg.Validate(); err != nil {
		return fmt.Errorf("header: %v", err)
	}
	// The weights the header's sizes call for must fit in the file (four
	// bytes each); each product is checked before it is formed, so none
	// overflows and nothing is allocated for an impossible header.
	limit := fileLen / 4
	fits := func(a, b int) (int, bool) {
		if a != 0 && b > limit/a {
			return 0, false
		}
		return a * b, true
	}
	widthSum := 0
	for _, w := range cfg.Widths {
		widthSum += w // each width is at most 32 (Validate)
	}
	emb, ok1 := fits(cfg.VocabSize, cfg.Dim)
	fd, ok2 := fits(cfg.Filters, cfg.Dim)
	conv, ok3 := fits(fd, widthSum)
	nf, ok4 := fits(cfg.Filters, len(cfg.Widths))
	out, ok5 := fits(cfg.Classes, nf)
	if !ok1 || !ok2 || !ok3 || !ok4 || !ok5 || emb > limit || conv > limit || out > limit || emb+conv+out > limit {
		return fmt.Errorf("header: sizes larger than the file: the file is corrupted")
	}
	if cfg.Chars != nil {
		// Validate bounds the layer's sizes and the alphabet lies in the
		// header, so its count cannot overflow.
		if f.version < 3 {
			return fmt.Errorf("a character layer in a version %d file: the file is damaged", f.version)
		}
		if cfg.Chars.numWeights() > limit {
			return fmt.Errorf("header: sizes larger than the file: the file is corrupted")
		}
	}
	if err := checkWideSize(cfg, f, limit); err != nil {
		return err
	}
	if err := checkBigramSize(cfg, f, limit); err != nil {
		return err
	}
	if want := numWeights(cfg, len(f.bigrams)/8); uint64(want) != f.nw {
		return fmt.Errorf("the configuration needs %d weights but the file has %d: the vocabulary or labels do not match the weights", want, f.nw)
	}
	if len(h.Vocab) != cfg.VocabSize {
		return fmt.Errorf("the vocabulary has %d words but the weights are for %d: the vocabulary does not match the weights", len(h.Vocab), cfg.VocabSize)
	}
	if len(h.Vocab) < 2 || h.Vocab[0] != corpus.PADWord || h.Vocab[1] != corpus.UNKWord {
		return fmt.Errorf("the vocabulary does not start with %s, %s: the file is damaged", corpus.PADWord, corpus.UNKWord)
	}
	if len(h.Labels) != cfg.Classes {
		return fmt.Errorf("%d label names for %d classes: the labels do not match the weights", len(h.Labels), cfg.Classes)
	}
	return nil
}

// checkWideSize checks the wide word-weight table a header announces
// (cfg.Wide) against the file's version and weights, limit being the most
// float32 values the file can hold: a table missing from the weights, or
// of another size than VocabSize × Classes, is named as such.
func checkWideSize(cfg Config, f fileParts, limit int) error {
	if !cfg.Wide {
		return nil
	}
	if f.version < 4 {
		return fmt.Errorf("a wide word-weight path in a version %d file: the file is damaged", f.version)
	}
	if cfg.Classes > limit/cfg.VocabSize {
		return fmt.Errorf("header: sizes larger than the file: the file is corrupted")
	}
	table := cfg.VocabSize * cfg.Classes
	want := uint64(numWeights(cfg, len(f.bigrams)/8))
	switch rest := want - uint64(table); {
	case f.nw == rest:
		return fmt.Errorf("the configuration has a wide word-weight path but the file lacks its table (%d words × %d classes): the file is damaged, retrain or restore it", cfg.VocabSize, cfg.Classes)
	case f.nw > rest && f.nw != want:
		return fmt.Errorf("the wide word-weight table has %d values but the configuration needs %d words × %d classes: the file is damaged, retrain or restore it", f.nw-rest, cfg.VocabSize, cfg.Classes)
	}
	return nil
}

// checkBigramSize checks the bigram weights a header announces
// (cfg.WideBigrams) against the file's version and sections: the keys come
// only in version 5 files, and only with bigram weights; their table must
// fit in limit float32 values.
func checkBigramSize(cfg Config, f fileParts, limit int) error {
	switch n := len(f.bigrams) / 8; {
	case cfg.WideBigrams && n > 0 && cfg.Classes > limit/n:
		return fmt.Errorf("header: sizes larger than the file: the file is corrupted")
	case cfg.WideBigrams && f.version < 5:
		return fmt.Errorf("bigram weights in a version %d file: the file is damaged", f.version)
	case !cfg.WideBigrams && len(f.bigrams) > 0:
		return fmt.Errorf("%d bigram keys but no bigram weights in the header: the file is damaged", len(f.bigrams)/8)
	}
	return nil
}

// maskedFilters turns the header's list of masked filter indices into a
// mask over nf filters, refusing an index outside 0..nf-1.
func maskedFilters(masked []int, nf int) ([]bool, error) {
	mask := make([]bool, nf)
	for _, g := range masked {
		if g < 0 || g >= nf {
			return nil, fmt.Errorf("masked filter %d outside 0..%d: the file is damaged", g, nf-1)
		}
		mask[g] = true
	}
	return mask, nil
}

// readWeights fills m's weights from w, the weights section (4 bytes a
// float32, in the file's order), and its bigram keys from keys (8 bytes
// each). m.Config has passed checkHeader, so w holds exactly
// numWeights(m.Config, len(keys)/8) values.
func (m *Model) readWeights(w, keys []byte) error {
	cfg := m.Config
	take := func(n int) []float32 {
		x := make([]float32, n)
		if nativeLittleEndian {
			// The file's bytes are the values' memory as they are.
			copy(unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(x))), 4*n), w[:4*n])
		} else {
			for i := range x {
				x[i] = math.Float32frombits(binary.LittleEndian.Uint32(w[4*i:]))
			}
		}
		w = w[4*n:]
		return x
	}
	m.Emb = take(cfg.VocabSize * cfg.Dim)
	for _, wd := range cfg.Widths {
		W := take(cfg.Filters * wd * cfg.Dim)
		m.Convs = append(m.Convs, Conv{Width: wd, W: W, B: take(cfg.Filters)})
	}
	m.OutW = take(cfg.Classes * cfg.NumFilters())
	m.OutB = take(cfg.Classes)
	if cc := cfg.Chars; cc != nil {
		m.Char = &CharLayer{Emb: take(cc.Rows() * cc.Dim), W: take(cc.Filters * cc.Width * cc.Dim), B: take(cc.Filters)}
		for _, v := range m.Char.Emb[:cc.Dim] {
			if v != 0 {
				return fmt.Errorf("the zero character's vector is not zero: the file is damaged")
			}
		}
	}
	if cfg.Wide {
		m.Wide = take(cfg.VocabSize * cfg.Classes)
		for _, v := range m.Wide[:cfg.Classes] {
			if v != 0 {
				return fmt.Errorf("the PAD row of the wide word-weight table is not zero: the file is damaged")
			}
		}
	}
	if cfg.WideBigrams {
		table := take(len(keys) / 8 * cfg.Classes)
		bigrams := make([]uint64, len(keys)/8)
		for i := range bigrams {
			bigrams[i] = binary.LittleEndian.Uint64(keys[8*i:])
		}
		if err := checkBigrams(bigrams, cfg.VocabSize); err != nil {
			return fmt.Errorf("%v: the file is damaged", err)
		}
		if err := m.SetBigrams(bigrams); err != nil {
			return err
		}
		m.WideBigram = table
	}
	return nil
}

// nativeLittleEndian says whether this machine stores a float32 in the
// byte order of the model file.
var nativeLittleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// setBaseline gives m the baseline of the header with its weights decoded
// from raw (8 bytes each), checking that the two agree with each other and
// with m's labels.
func setBaseline(m *Model, b *linear.Model, raw []byte) error {
	if b == nil {
		if len(raw) > 0 {
			return fmt.Errorf("%d baseline weights but no baseline in the header: the file is damaged", len(raw)/8)
		}
		return nil
	}
	if !slices.Equal(b.Labels, m.Labels) {
		return fmt.Errorf("the baseline's labels %q differ from the model's %q: the file is damaged", b.Labels, m.Labels)
	}
	if b.Vectorizer == nil || b.Classifier == nil {
		return fmt.Errorf("the baseline has no features or classifier: the file is damaged")
	}
	// The sizes are checked before the weights are allocated.
	if p := len(b.Vectorizer.Features); b.Classifier.Features != p || b.Classifier.Classes != len(b.Labels) ||
		uint64(p)*uint64(len(b.Labels)+1)+uint64(len(b.Labels)) != uint64(len(raw)/8) {
		return fmt.Errorf("the baseline's %d features and %d classes do not match its %d weights: the file is damaged", p, len(b.Labels), len(raw)/8)
	}
	w := make([]float64, len(raw)/8)
	for i := range w {
		w[i] = math.Float64frombits(binary.LittleEndian.Uint64(raw[8*i:]))
	}
	if err := b.SetWeights(w); err != nil {
		return fmt.Errorf("baseline: %v: the file is damaged", err)
	}
	m.Baseline = b
	return nil
}
