package corpus

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"unicode"
	"unicode/utf8"

	"telltale/internal/inputfile"
	"telltale/internal/wording"
)

// DefaultMaxTextBytes is the text length limit used when Options.MaxTextBytes is 0.
const DefaultMaxTextBytes = 1 << 20

// recordLimitFactor: a record (CSV/TSV record or JSON line) longer than
// recordLimitFactor*MaxTextBytes bytes is an error (ErrTooLong); texts longer
// than MaxTextBytes but within that limit are truncated with a warning.
const recordLimitFactor = 8

// Options control reading. The zero value reads the format implied by the
// path with columns "text" and "label" (or auto-detected ones).
type Options struct {
	// TextCol and LabelCol name the text and label columns (CSV/TSV header
	// names, JSON keys). Empty means: "text"/"label" if present, else a
	// common name (sentence, review, body… / category, class, target…) if
	// exactly one matches, else the other column of a two-column file.
	// Names are compared case-insensitively.
	TextCol, LabelCol string
	// Format is "", "csv", "tsv", "jsonl" or "dir". Empty: a directory is
	// "dir", otherwise the extension decides (.csv; .tsv/.tab; .jsonl/.ndjson).
	Format string
	// MaxTextBytes is the longest text kept (0 = DefaultMaxTextBytes).
	// Longer texts are truncated at a UTF-8 boundary with a warning. A
	// record longer than 8×MaxTextBytes is an error, which bounds memory.
	MaxTextBytes int
	// ReplaceInvalidUTF8 replaces invalid UTF-8 sequences by U+FFFD with a
	// warning instead of failing (mail corpora often hold Latin-1 bytes).
	ReplaceInvalidUTF8 bool
	// Unlabeled reads texts to be labeled: the label column is used when
	// there is one (Example.Label is "" otherwise), a file with one column
	// is all text, a folder's files count at its top level as well as in
	// label folders, and one label (or none) is not an error.
	Unlabeled bool
	// HeldOut reads a labeled dev or test file, evaluated against the
	// labels of a model or of training data: one label is enough (a test
	// file of one class measures its recall). Whether each label is one
	// they know is checked where the labels are matched
	// (Dataset.LabelIndex).
	HeldOut bool
}

// Example is one labeled text.
type Example struct {
	Text, Label string
	Line        int    // 1-based line where the record starts; 0 for folders
	File        string // folders: path of the file relative to the root; else empty
}

// Dataset is a loaded corpus.
type Dataset struct {
	Path     string
	Examples []Example
	Labels   []string // sorted unique labels
}

// Where names an example's origin for messages: "path line N" or "path/file".
func (d *Dataset) Where(e Example) string {
	if e.File != "" {
		return filepath.Join(d.Path, e.File)
	}
	return fmt.Sprintf("%s line %d", d.Path, e.Line)
}

// Load reads the whole corpus at path (a file, or a folder with one
// sub-folder per label). It returns the examples in file order, the
// warnings, and an error wrapping one of the sentinels for bad input.
// Nothing on disk is modified.
func Load(path string, opt Options) (*Dataset, []Warning, error) {
	d := &Dataset{Path: path}
	seen := map[string]bool{}
	ws, err := Stream(path, opt, func(e Example) error {
		d.Examples = append(d.Examples, e)
		if !seen[e.Label] {
			seen[e.Label] = true
			d.Labels = append(d.Labels, e.Label)
		}
		return nil
	})
	if err != nil {
		return nil, ws, err
	}
	sort.Strings(d.Labels)
	return d, ws, nil
}

// Stream reads the corpus at path like Load but hands each example to fn
// instead of keeping it, so memory does not grow with the corpus. An error
// returned by fn stops reading and is returned as is. After the last
// example Stream checks that there were examples and, unless
// opt.Unlabeled or opt.HeldOut, at least two labels (a classifier needs
// two), so fn may have seen examples of a corpus that is finally
// rejected.
func Stream(path string, opt Options, fn func(Example) error) ([]Warning, error) {
	if opt.MaxTextBytes <= 0 {
		opt.MaxTextBytes = DefaultMaxTextBytes
	}
	st, err := os.Stat(path)
	if err != nil {
		return nil, kindError(ErrEmpty, "corpus: %s: cannot open: %v: check the path", path, err)
	}
	format := opt.Format
	if format == "" {
		format = detectFormat(path, st.IsDir())
	}
	ws := &warnings{path: path}
	labels := map[string]int{}
	n := 0
	var sample labelSample
	count := func(e Example) error {
		n++
		if len(labels) < 2 {
			labels[e.Label]++
		}
		sample.add(e.Label)
		return fn(e)
	}
	switch format {
	case "dir":
		if !st.IsDir() {
			return nil, errAt(path, 0, ErrFormat, "format dir needs a folder with one sub-folder per label")
		}
		err = readDir(path, opt, ws, count)
	case "csv", "tsv", "jsonl":
		if st.IsDir() {
			return nil, errAt(path, 0, ErrFormat, "is a folder: a folder is read as one sub-folder per label (format dir)")
		}
		var f *os.File
		f, err = inputfile.Open(path)
		if err != nil {
			return nil, kindError(ErrEmpty, "corpus: %s: cannot open: %v", path, err)
		}
		defer f.Close()
		if format == "jsonl" {
			err = readJSONL(f, path, opt, ws, count)
		} else {
			err = readDelimited(f, path, format, opt, ws, count)
		}
	case "":
		return nil, errAt(path, 0, ErrFormat, "cannot tell the format from the name: use a .csv, .tsv or .jsonl extension, or give the format (--format csv, tsv, jsonl or dir)")
	default:
		return nil, errAt(path, 0, ErrFormat, "unknown format %q: use csv, tsv, jsonl or dir", format)
	}
	if err != nil {
		return ws.result(), sample.hint(err)
	}
	if n == 0 && format == "dir" {
		return ws.result(), errAt(path, 0, ErrEmpty, "no examples found in the folder: a data folder holds one sub-folder per label, each with one .txt file per example; "+
			"to read a CSV, TSV or JSON Lines file in it, give the file's path instead")
	}
	if n == 0 {
		return ws.result(), errAt(path, 0, ErrEmpty, "no examples found: the file needs a header row and at least one record with a non-empty text")
	}
	if len(labels) < 2 && !opt.Unlabeled && !opt.HeldOut {
		var only string
		for l := range labels {
			only = l
		}
		fix := "check the label column"
		if format == "dir" {
			fix = "put the examples of each label in one sub-folder per label"
		}
		return ws.result(), errAt(path, 0, ErrLabel, "only one label %s in %s: a classifier needs at least two labels; %s", quote(only), wording.Count(n, "example", "examples"), fix)
	}
	return ws.result(), nil
}

// labelSample holds the distinct labels (by their hash) of the first
// labelSampleSize examples read, to tell a label column that holds texts.
type labelSample struct {
	n, spaced int // examples seen, and those whose label has a space within
	distinct  map[uint64]bool
}

// labelSampleSize is the number of examples a labelSample looks at; the
// distinct labels a label column that holds texts has beyond it tell
// nothing more, and would only take memory.
const labelSampleSize = 1000

// add counts label, among the first labelSampleSize examples.
func (s *labelSample) add(label string) {
	if s.n >= labelSampleSize {
		return
	}
	if s.distinct == nil {
		s.distinct = map[uint64]bool{}
	}
	s.n++
	if strings.ContainsFunc(strings.TrimSpace(label), unicode.IsSpace) {
		s.spaced++
	}
	s.distinct[hashString(label)] = true
}

// looksLikeText reports whether the labels seen look like texts: more
// than 50 distinct labels, more than half of the examples seen (at most
// the first labelSampleSize) with a label no other has, and more than half
// with a space within their label. A label set of a classifier is smaller,
// its labels repeat, and even a large one (a hundred intents) names them
// in single words ("book_flight").
func (s *labelSample) looksLikeText() bool {
	return len(s.distinct) > 50 && 2*len(s.distinct) > s.n && 2*s.spaced > s.n
}

// hint adds to the error of an empty label, when the labels read before
// it look like texts, that the text and label columns may be swapped;
// any other error is returned as is.
func (s *labelSample) hint(err error) error {
	var ke *kindedError
	if !errors.As(err, &ke) || !ke.emptyLabel || !s.looksLikeText() {
		return err
	}
	return &kindedError{msg: fmt.Sprintf("%s; the label column looks like text (%d distinct labels among the first %s): "+
		"the columns may be swapped: check that --text-col names the text column and --label-col the label column",
		ke.msg, len(s.distinct), wording.Count(s.n, "example", "examples")), kind: ke.kind, line: ke.line}
}

func detectFormat(path string, dir bool) string {
	if dir {
		return "dir"
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return "csv"
	case ".tsv", ".tab":
		return "tsv"
	case ".jsonl", ".ndjson":
		return "jsonl"
	}
	return ""
}

// Column auto-detection candidates, common names for text and label fields
// in public classification data sets (common practice, no source).
var (
	textNames  = []string{"text", "sentence", "review", "body", "content", "message", "document", "comment", "utterance", "tweet"}
	labelNames = []string{"label", "category", "class", "target", "intent", "sentiment", "labels", "y"}
)

// pickColumns resolves the text and label column indexes in names; li is
// −1 when opt.Unlabeled and no label column is named or recognised. header
// is the format ("csv", "tsv") when the names come from a header row,
// whose absence is the usual reason why no name is recognised, and ""
// otherwise.
func pickColumns(names []string, opt Options, path string, line int, header string) (ti, li int, err error) {
	find := func(want string) int {
		for i, n := range names {
			if strings.EqualFold(strings.TrimSpace(n), want) {
				return i
			}
		}
		return -1
	}
	guess := func(cands []string) int {
		if i := find(cands[0]); i >= 0 {
			return i
		}
		hit := -1
		for _, c := range cands[1:] {
			if i := find(c); i >= 0 {
				if hit >= 0 {
					return -2 // ambiguous
				}
				hit = i
			}
		}
		return hit
	}
	list := quoteList(names)
	if opt.TextCol != "" {
		if ti = find(opt.TextCol); ti < 0 {
			return 0, 0, errAt(path, line, ErrColumn, "text column %s not found; the columns are %s: pass the right name with --text-col", quote(opt.TextCol), list)
		}
	} else {
		ti = guess(textNames)
	}
	if opt.LabelCol != "" {
		if li = find(opt.LabelCol); li < 0 {
			return 0, 0, errAt(path, line, ErrColumn, "label column %s not found; the columns are %s: pass the right name with --label-col", quote(opt.LabelCol), list)
		}
	} else {
		li = guess(labelNames)
	}
	if len(names) == 2 {
		// Texts to label need no label column: the other one may be anything.
		if ti >= 0 && li < 0 && !opt.Unlabeled {
			li = 1 - ti
		} else if li >= 0 && ti < 0 {
			ti = 1 - li
		}
	}
	if opt.Unlabeled {
		if ti < 0 && len(names) == 1 {
			ti = 0
		}
		if li < 0 || li == ti {
			li = -1
		}
	}
	if ti < 0 {
		return 0, 0, errAt(path, line, ErrColumn, "cannot tell which column holds the text; %s", columnsHint(list, "text", header))
	}
	if li < 0 && !opt.Unlabeled {
		return 0, 0, errAt(path, line, ErrColumn, "cannot tell which column holds the label; %s", columnsHint(list, "label", header))
	}
	if ti == li {
		return 0, 0, errAt(path, line, ErrColumn, "text and label are the same column %s: pass different --text-col and --label-col", quote(names[ti]))
	}
	return ti, li, nil
}

// columnNote says which text and label columns (what: "column" or
// "field") were taken when either was found by a name other than the
// default one (text, label) rather than named by an option, so that a
// wrong guess is seen; "" when none was. label is "" for no label column.
func columnNote(opt Options, text, label, what string) string {
	var taken, opts []string
	if opt.TextCol == "" && !strings.EqualFold(strings.TrimSpace(text), "text") {
		taken, opts = append(taken, fmt.Sprintf("the text %s %s", what, quote(text))), append(opts, "--text-col")
	}
	if opt.LabelCol == "" && label != "" && !strings.EqualFold(strings.TrimSpace(label), "label") {
		taken, opts = append(taken, fmt.Sprintf("the label %s %s", what, quote(label))), append(opts, "--label-col")
	}
	if len(taken) == 0 {
		return ""
	}
	return fmt.Sprintf("took %s, chosen by name: give %s to choose another", strings.Join(taken, " and "), strings.Join(opts, " or "))
}

// columnsHint names the columns found and the fixes for an unrecognised
// text or label column (what). A header row (header is its format, "csv"
// or "tsv"; "" for none) whose names are not column names is most often a
// missing header: the first record was taken for it. The header suggested
// is in the file's own delimiter.
func columnsHint(list, what, header string) string {
	if header == "" {
		return fmt.Sprintf("the fields are %s: pass --%s-col with the name of the %s field", list, what, what)
	}
	example := "text,label"
	if header == "tsv" {
		example = "text, a tab, label (text<TAB>label)"
	}
	return fmt.Sprintf("the columns are %s (the first line): if that line is an example rather than a header, the file lacks its header row: "+
		"add a first line naming the columns, e.g. %s; otherwise pass --%s-col with the name of the %s column", list, example, what, what)
}

// checkText validates the bytes of a field: no NUL, valid UTF-8 (or
// replaced when opt allows). line is the line where the field starts.
func checkText(s string, path string, line int, opt Options, ws *warnings, what string) (string, error) {
	if i := strings.IndexByte(s, 0); i >= 0 {
		return "", errAt(path, line+strings.Count(s[:i], "\n"), ErrEncoding, "NUL byte in the %s: the file looks binary or UTF-16; save it as UTF-8 text", what)
	}
	if !utf8.ValidString(s) {
		bad := 0
		for i := 0; i < len(s); {
			r, size := utf8.DecodeRuneInString(s[i:])
			if r == utf8.RuneError && size == 1 {
				bad = i
				break
			}
			i += size
		}
		l := line + strings.Count(s[:bad], "\n")
		if !opt.ReplaceInvalidUTF8 {
			return "", errAt(path, l, ErrEncoding, "invalid UTF-8 byte 0x%02x in the %s: convert the file to UTF-8 (e.g. iconv -f latin1 -t utf-8), or replace bad bytes with --replace-invalid-utf8", s[bad], what)
		}
		ws.invalidUTF8(path, l, what)
		s = strings.ToValidUTF8(s, "\uFFFD")
	}
	return s, nil
}

// truncate cuts s to at most max bytes at a rune boundary.
func truncate(s string, max int) string {
	if len(s) <= max {
		return s
	}
	cut := max
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut]
}

// makeExample applies the shared checks to one raw record.
func makeExample(text, label, path, file string, line, labelLine int, opt Options, ws *warnings) (Example, bool, error) {
	var err error
	if text, err = checkText(text, path, line, opt, ws, "text"); err != nil {
		return Example{}, false, err
	}
	if label, err = checkText(label, path, labelLine, opt, ws, "label"); err != nil {
		return Example{}, false, err
	}
	label = strings.TrimSpace(label)
	if label == "" && !opt.Unlabeled {
		err := errAt(path, labelLine, ErrLabel, "empty label: give every example a label, or remove the record")
		err.(*kindedError).emptyLabel = true
		return Example{}, false, err
	}
	if !opt.Unlabeled && strings.IndexFunc(label, unicode.IsControl) >= 0 {
		return Example{}, false, errAt(path, labelLine, ErrLabel,
			"label %s holds a line break, a tab or another control character: a label is one line of plain text (it names the class in every output); "+
				"the label column may hold text here: check --label-col, or fix the record", quote(label))
	}
	if strings.TrimSpace(text) == "" {
		ws.add(path, line, "empty text skipped")
		return Example{}, false, nil
	}
	if len(text) > opt.MaxTextBytes {
		ws.add(path, line, "text of %d bytes truncated to %d bytes (raise --max-text-bytes to keep more)", len(text), opt.MaxTextBytes)
		text = truncate(text, opt.MaxTextBytes)
	}
	return Example{Text: text, Label: label, Line: line, File: file}, true, nil
}

// limitReader fails once more than limit bytes are read since the last
// reset, so one enormous record cannot exhaust memory.
type limitReader struct {
	r     io.Reader
	n     int
	limit int
}

var errRecordLimit = errors.New("record limit")

func (l *limitReader) Read(p []byte) (int, error) {
	if l.n > l.limit {
		return 0, errRecordLimit
	}
	if len(p) > l.limit-l.n+1 {
		p = p[:l.limit-l.n+1]
	}
	n, err := l.r.Read(p)
	l.n += n
	return n, err
}

// skipBOM consumes a UTF-8 byte order mark and rejects UTF-16 ones.
func skipBOM(br *bufio.Reader, path string) error {
	b, _ := br.Peek(3)
	if bytes.HasPrefix(b, []byte("\xef\xbb\xbf")) {
		br.Discard(3)
		return nil
	}
	if bytes.HasPrefix(b, []byte("\xff\xfe")) || bytes.HasPrefix(b, []byte("\xfe\xff")) {
		return errAt(path, 1, ErrEncoding, "the file is UTF-16: save it as UTF-8")
	}
	return nil
}

func readDelimited(r io.Reader, path, format string, opt Options, ws *warnings, fn func(Example) error) error {
	br := bufio.NewReaderSize(r, 64<<10)
	if err := skipBOM(br, path); err != nil {
		return err
	}
	d := newDelimited(br, path, format, recordLimitFactor*opt.MaxTextBytes)
	names, err := d.header(format, opt.Unlabeled, ws)
	if err != nil {
		return err
	}
	ti, li, err := pickColumns(names, opt, path, 1, format)
	if err != nil {
		return err
	}
	label := ""
	if li >= 0 {
		label = names[li]
	}
	if note := columnNote(opt, names[ti], label, "column"); note != "" {
		ws.add(path, 1, "%s", note)
	}
	cr := d.cr
	cr.FieldsPerRecord = len(names)
	nextLine := 2 // line after the last record read (for errors without a position)
	for {
		d.lr.n = 0
		rec, err := cr.Read()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return d.wrap(err, nextLine)
		}
		last := len(rec) - 1
		endLine, _ := cr.FieldPos(last)
		nextLine = endLine + strings.Count(rec[last], "\n") + 1
		line, _ := cr.FieldPos(ti)
		label, labelLine := "", line
		if li >= 0 {
			label = rec[li]
			labelLine, _ = cr.FieldPos(li)
		}
		start, _ := cr.FieldPos(0)
		e, ok, err := makeExample(rec[ti], label, path, "", line, labelLine, opt, ws)
		if err != nil {
			return err
		}
		if !ok {
			continue
		}
		e.Line = start
		if err := fn(e); err != nil {
			return err
		}
	}
}

// delimited is a CSV or TSV reader over the file path whose records are
// each at most limit bytes.
type delimited struct {
	path  string
	limit int
	lr    *limitReader // its count n is reset before each record
	cr    *csv.Reader
}

// newDelimited reads br (past any byte order mark) as format, "csv" or
// "tsv", reusing each record's slice; the field count is left open for
// the header.
func newDelimited(br *bufio.Reader, path, format string, limit int) *delimited {
	lr := &limitReader{r: br, limit: limit}
	cr := csv.NewReader(bufio.NewReaderSize(lr, 16<<10))
	if format == "tsv" {
		// TSV files are seldom quoted: a bare quote inside a text is text.
		cr.Comma, cr.LazyQuotes = '\t', true
	}
	cr.ReuseRecord = true
	cr.FieldsPerRecord = 0 // set from the header
	return &delimited{path: path, limit: limit, lr: lr, cr: cr}
}

// wrap turns a read error at line into an error naming the file, the line
// and the fix.
func (d *delimited) wrap(err error, line int) error {
	path := d.path
	if errors.Is(err, errRecordLimit) {
		return errAt(path, line, ErrTooLong, "record longer than %d bytes: the file may lack line breaks or have an unclosed quote; or raise --max-text-bytes (limit is %d × it)", d.limit, recordLimitFactor)
	}
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		switch {
		case errors.Is(pe.Err, csv.ErrFieldCount):
			return errAt(path, pe.StartLine, ErrFormat, "record has a different number of fields than the header (%d): quote fields that contain the delimiter", d.cr.FieldsPerRecord)
		case errors.Is(pe.Err, csv.ErrBareQuote), errors.Is(pe.Err, csv.ErrQuote):
			return errAt(path, pe.StartLine, ErrFormat, "malformed quoting (%v at line %d, column %d): put quoted fields in double quotes and double any quote inside them", pe.Err, pe.Line, pe.Column)
		}
		return errAt(path, pe.StartLine, ErrFormat, "%v", pe.Err)
	}
	return kindError(ErrFormat, "corpus: %s line %d: read error: %v", path, line, err)
}

// header reads the header row, the first record, and returns its column
// names, trimmed (unlabeled: texts to label, which need no label column). It refuses an empty file, a header in the wrong encoding,
// a single column that holds another format's delimiter and a name that
// appears twice (letter case aside).
func (d *delimited) header(format string, unlabeled bool, ws *warnings) ([]string, error) {
	path := d.path
	header, err := d.cr.Read()
	// The header is not checked for field counts: records must match it.
	if err == io.EOF {
		return nil, errAt(path, 0, ErrEmpty, "file is empty: %s", needsHeader(unlabeled))
	}
	if err != nil {
		return nil, d.wrap(err, 1)
	}
	names := make([]string, len(header))
	for i, h := range header {
		if _, err := checkText(h, path, 1, Options{}, ws, "header"); err != nil {
			return nil, err
		}
		names[i] = strings.TrimSpace(h)
	}
	if len(names) == 1 {
		h := names[0]
		for _, alt := range []struct{ sep, name, fix string }{{"\t", "tab", "tsv"}, {";", "semicolon", ""}, {"|", "bar", ""}, {",", "comma", "csv"}} {
			if strings.Contains(h, alt.sep) && (format != "csv" || alt.sep != ",") && (format != "tsv" || alt.sep != "\t") {
				fix := "convert it to comma- or tab-separated"
				if alt.fix != "" {
					fix = "name it ." + alt.fix + " or read it as " + alt.fix + " (--format " + alt.fix + ")"
				}
				return nil, errAt(path, 1, ErrFormat, "header has one column %s containing %ss: the file looks %s-separated, not %s; %s", quote(h), alt.name, alt.name, format, fix)
			}
		}
	}
	seen := map[string]bool{}
	for _, n := range names {
		k := strings.ToLower(n)
		if seen[k] {
			return nil, errAt(path, 1, ErrColumn, "column %s appears twice in the header: rename one", quote(n))
		}
		seen[k] = true
	}
	return names, nil
}

// readLine reads one line (without the line break and a trailing CR) into
// buf, failing with errRecordLimit past limit bytes.
func readLine(br *bufio.Reader, buf []byte, limit int) ([]byte, error) {
	buf = buf[:0]
	for {
		chunk, err := br.ReadSlice('\n')
		if len(buf)+len(chunk) > limit+2 {
			// consume the rest of the line so the caller could go on
			for err == bufio.ErrBufferFull {
				_, err = br.ReadSlice('\n')
			}
			return buf, errRecordLimit
		}
		buf = append(buf, chunk...)
		if err == bufio.ErrBufferFull {
			continue
		}
		if err != nil && !(err == io.EOF && len(buf) > 0) {
			return buf, err
		}
		buf = bytes.TrimSuffix(buf, []byte("\n"))
		buf = bytes.TrimSuffix(buf, []byte("\r"))
		return buf, nil
	}
}

// readJSONL reads JSON lines. The first line that holds a record sets the
// text and label keys; the lines after it are parsed by several
// goroutines, a batch of lines each, and handed to fn in file order with
// the same checks, warnings and first error as one line at a time.
func readJSONL(r io.Reader, path string, opt Options, ws *warnings, fn func(Example) error) error {
	br := bufio.NewReaderSize(r, 64<<10)
	if err := skipBOM(br, path); err != nil {
		return err
	}
	lr := jsonlReader{br: br, path: path, limit: recordLimitFactor * opt.MaxTextBytes}
	var keys jsonlKeys
	for keys.text == "" {
		b, err := lr.next()
		if err == io.EOF {
			if lr.line == 1 {
				return errAt(path, 0, ErrEmpty, "file is empty: it needs one JSON object per line")
			}
			return nil
		}
		if err != nil {
			return err
		}
		text, label, ok, err := parseJSONLine(b, path, lr.line, opt, &keys)
		if err != nil {
			return err
		}
		if note := columnNote(opt, keys.text, keys.label, "field"); keys.text != "" && note != "" {
			ws.add(path, lr.line, "%s", note)
		}
		if ok {
			if err := emitJSONL(text, label, path, lr.line, opt, ws, fn); err != nil {
				return err
			}
		}
	}
	return readJSONLParallel(&lr, opt, ws, keys, fn)
}

// jsonlKeys are the JSON keys of the text and the label ("" for none).
type jsonlKeys struct{ text, label string }

// jsonlReader reads the lines of a JSON-lines file; line is the number of
// the line last read.
type jsonlReader struct {
	br    *bufio.Reader
	path  string
	limit int
	buf   []byte
	line  int
}

// next reads the next line into a buffer reused by the next call. It
// returns io.EOF at the end, or an error naming the line.
func (lr *jsonlReader) next() ([]byte, error) {
	lr.line++
	b, err := readLine(lr.br, lr.buf, lr.limit)
	lr.buf = b
	switch {
	case err == nil, err == io.EOF:
		return b, err
	case err == errRecordLimit:
		return nil, errAt(lr.path, lr.line, ErrTooLong, "line longer than %d bytes: raise --max-text-bytes (limit is %d × it)", lr.limit, recordLimitFactor)
	default:
		return nil, kindError(ErrFormat, "corpus: %s line %d: read error: %v", lr.path, lr.line, err)
	}
}

// parseJSONLine parses one line: ok is false for a blank line. When keys
// holds no text key yet, the line's keys choose them.
func parseJSONLine(b []byte, path string, line int, opt Options, keys *jsonlKeys) (text, label string, ok bool, err error) {
	if len(bytes.TrimSpace(b)) == 0 {
		return "", "", false, nil
	}
	if i := bytes.IndexByte(b, 0); i >= 0 {
		return "", "", false, errAt(path, line, ErrEncoding, "NUL byte: the file looks binary or UTF-16; save it as UTF-8 text")
	}
	if keys.text != "" {
		if text, label, ok := parseFlatJSONLine(b, *keys); ok {
			return text, label, true, nil
		}
	}
	var obj map[string]json.RawMessage
	if err := json.Unmarshal(b, &obj); err != nil {
		return "", "", false, notObject(b, path, line, err)
	}
	if keys.text == "" {
		names := make([]string, 0, len(obj))
		for k := range obj {
			names = append(names, k)
		}
		sort.Strings(names)
		ti, li, err := pickColumns(names, opt, path, line, "")
		if err != nil {
			return "", "", false, err
		}
		keys.text = names[ti]
		if li >= 0 {
			keys.label = names[li]
		}
	}
	if text, err = jsonField(obj, keys.text, true); err != nil {
		return "", "", false, errAt(path, line, ErrColumn, "field %s: %v", quote(keys.text), err)
	}
	if keys.label != "" {
		if label, err = jsonField(obj, keys.label, false); err != nil {
			return "", "", false, errAt(path, line, ErrColumn, "field %s: %v", quote(keys.label), err)
		}
	}
	return text, label, true, nil
}

// parseFlatJSONLine is parseJSONLine's path for the common line once the
// keys are known: one object whose keys and values are all strings with
// no escape and no control byte, the whole line valid UTF-8. For such a
// line it returns what json.Unmarshal into a map gives (a repeated key:
// its last value) and ok; for any other line, or one that lacks a key, ok
// is false and the general path parses it, errors included.
func parseFlatJSONLine(b []byte, keys jsonlKeys) (text, label string, ok bool) {
	if !utf8.Valid(b) {
		return "", "", false
	}
	i := skipJSONSpace(b, 0)
	if i >= len(b) || b[i] != '{' {
		return "", "", false
	}
	var tv, lv []byte
	haveText, haveLabel := false, false
	for {
		k, j, ok := flatJSONString(b, skipJSONSpace(b, i+1))
		if !ok {
			return "", "", false
		}
		i = skipJSONSpace(b, j)
		if i >= len(b) || b[i] != ':' {
			return "", "", false
		}
		v, j, ok := flatJSONString(b, skipJSONSpace(b, i+1))
		if !ok {
			return "", "", false
		}
		if string(k) == keys.text {
			tv, haveText = v, true
		}
		if keys.label != "" && string(k) == keys.label {
			lv, haveLabel = v, true
		}
		i = skipJSONSpace(b, j)
		if i < len(b) && b[i] == ',' {
			continue
		}
		if i >= len(b) || b[i] != '}' || skipJSONSpace(b, i+1) != len(b) {
			return "", "", false
		}
		break
	}
	if !haveText || (keys.label != "" && !haveLabel) {
		return "", "", false
	}
	return string(tv), string(lv), true
}

// skipJSONSpace is the index of the first byte of b from i on that is not
// JSON white space (RFC 8259: space, tab, line feed, carriage return).
func skipJSONSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r') {
		i++
	}
	return i
}

// flatJSONString reads the JSON string that starts at b[i] when it holds
// no escape and no control byte: its contents and the index after its
// closing quote. Ok is false for any other value.
func flatJSONString(b []byte, i int) (s []byte, end int, ok bool) {
	if i >= len(b) || b[i] != '"' {
		return nil, 0, false
	}
	for j := i + 1; j < len(b); j++ {
		switch c := b[j]; {
		case c == '"':
			return b[i+1 : j], j + 1, true
		case c == '\\' || c < 0x20:
			return nil, 0, false
		}
	}
	return nil, 0, false
}

// emitJSONL applies the shared checks to one record and hands it to fn.
func emitJSONL(text, label, path string, line int, opt Options, ws *warnings, fn func(Example) error) error {
	e, ok, err := makeExample(text, label, path, "", line, line, opt, ws)
	if err != nil || !ok {
		return err
	}
	return fn(e)
}

// jsonlBatch is a run of consecutive lines and, once parsed, their records.
type jsonlBatch struct {
	first int    // number of the first line
	data  []byte // the lines one after the other
	ends  []int
	recs  []jsonlRecord
	err   error // the reader's error after the last line; nil at the end
	ready chan struct{}
}

type jsonlRecord struct {
	text, label string
	ok          bool
	err         error
}

const jsonlBatchLines = 512

// readJSONLParallel reads the lines after the one that set keys: one
// goroutine reads batches of lines, GOMAXPROCS goroutines parse them, and
// this one hands the records to fn in order, stopping at the first error.
func readJSONLParallel(lr *jsonlReader, opt Options, ws *warnings, keys jsonlKeys, fn func(Example) error) error {
	workers := runtime.GOMAXPROCS(0)
	done := make(chan struct{})
	defer close(done)
	free := make(chan *jsonlBatch, 2*workers+2)
	for range cap(free) {
		free <- &jsonlBatch{ready: make(chan struct{}, 1)}
	}
	work := make(chan *jsonlBatch, cap(free))
	order := make(chan *jsonlBatch, cap(free))
	go func() {
		defer close(order)
		defer close(work)
		for {
			var b *jsonlBatch
			select {
			case <-done:
				return
			default:
			}
			select {
			case b = <-free:
			case <-done:
				return
			}
			last := lr.fill(b)
			work <- b
			order <- b
			if last {
				return
			}
		}
	}()
	for range workers {
		go func() {
			for b := range work {
				b.parse(lr.path, opt, keys)
				b.ready <- struct{}{}
			}
		}()
	}
	for b := range order {
		<-b.ready
		for i, r := range b.recs {
			if r.err != nil {
				return r.err
			}
			if r.ok {
				if err := emitJSONL(r.text, r.label, lr.path, b.first+i, opt, ws, fn); err != nil {
					return err
				}
			}
		}
		if b.err != nil {
			return b.err
		}
		free <- b
	}
	return nil
}

// fill reads up to jsonlBatchLines lines into b. Last is true when the
// file ended or the read failed (the error is then in b.err).
func (lr *jsonlReader) fill(b *jsonlBatch) (last bool) {
	b.first, b.data, b.ends, b.err = lr.line+1, b.data[:0], b.ends[:0], nil
	for len(b.ends) < jsonlBatchLines {
		line, err := lr.next()
		if err == io.EOF {
			return true
		}
		if err != nil {
			b.err = err
			return true
		}
		b.data = append(b.data, line...)
		b.ends = append(b.ends, len(b.data))
	}
	return false
}

// parse parses every line of b into b.recs.
func (b *jsonlBatch) parse(path string, opt Options, keys jsonlKeys) {
	b.recs = b.recs[:0]
	lo := 0
	for i, hi := range b.ends {
		var r jsonlRecord
		r.text, r.label, r.ok, r.err = parseJSONLine(b.data[lo:hi], path, b.first+i, opt, &keys)
		b.recs = append(b.recs, r)
		lo = hi
		if r.err != nil {
			return
		}
	}
}

// jsonField returns obj[key] as a string. Labels may also be numbers or
// booleans (written as in the file). A value that is wrong is repeated in
// the message cut to maxQuoted bytes.
func jsonField(obj map[string]json.RawMessage, key string, text bool) (string, error) {
	raw, ok := obj[key]
	if !ok {
		return "", fmt.Errorf("missing: every line needs the same fields")
	}
	raw = bytes.TrimSpace(raw)
	if len(raw) > 0 && raw[0] == '"' {
		var s string
		if err := json.Unmarshal(raw, &s); err != nil {
			return "", err
		}
		return s, nil
	}
	if !text && len(raw) > 0 && (raw[0] == '-' || (raw[0] >= '0' && raw[0] <= '9') || string(raw) == "true" || string(raw) == "false") {
		return string(raw), nil
	}
	shown := string(raw)
	if len(shown) > maxQuoted {
		shown = fmt.Sprintf("%s… (%d bytes)", truncate(shown, maxQuoted), len(raw))
	}
	if text {
		return "", fmt.Errorf("is %s, not a string: the text must be a JSON string", shown)
	}
	return "", fmt.Errorf("is %s: a label must be a string, a number, true or false", shown)
}

// readDir reads a folder with one sub-folder per label. Within a label
// folder, the examples are the regular files whose name has the extension
// .txt or no extension at all, in name order; hidden entries (name starting
// with ".") are skipped, other files (e.g. .json twins) are skipped with one
// warning per folder, and entries at the top level or nested deeper are
// ignored with a warning. Symbolic links are not followed, so nothing
// outside the folder is read: each is skipped with a warning that says so.
// With opt.Unlabeled, files at the top level are texts too (label "").
func readDir(root string, opt Options, ws *warnings, fn func(Example) error) error {
	entries, err := os.ReadDir(root)
	if err != nil {
		return kindError(ErrEmpty, "corpus: %s: cannot read folder: %v", root, err)
	}
	ignored := 0
	for _, de := range entries {
		name := de.Name()
		switch {
		case strings.HasPrefix(name, "."):
		case de.Type()&fs.ModeSymlink != 0:
			ws.add(filepath.Join(root, name), 0, symlinkSkipped)
		case de.IsDir():
			if err := readLabelDir(root, name, strings.TrimSpace(name), opt, ws, fn); err != nil {
				return err
			}
		case opt.Unlabeled && isExampleFile(de):
			if _, err := readExampleFile(root, name, "", opt, ws, fn); err != nil {
				return err
			}
		default:
			ignored++
		}
	}
	if ignored > 0 {
		ws.add(root, 0, "%s at the top level ignored: examples belong in one sub-folder per label", wording.Count(ignored, "file", "files"))
	}
	return nil
}

// symlinkSkipped is the warning for a symbolic link in a data folder.
const symlinkSkipped = "symbolic link skipped: links in a data folder are not followed, so that nothing outside it is read; " +
	"put the folder or file itself there (e.g. copy it with cp -rL)"

// isExampleFile reports whether a folder entry is an example file: a
// regular file named .txt or without extension.
func isExampleFile(de fs.DirEntry) bool {
	ext := filepath.Ext(de.Name())
	return de.Type().IsRegular() && (ext == "" || strings.EqualFold(ext, ".txt"))
}

// readLabelDir reads the examples of the label folder root/name.
func readLabelDir(root, name, label string, opt Options, ws *warnings, fn func(Example) error) error {
	sub := filepath.Join(root, name)
	files, err := os.ReadDir(sub)
	if err != nil {
		return kindError(ErrEmpty, "corpus: %s: the label folder cannot be read (%v): make it readable, or move it out of the data folder", sub, pathless(err))
	}
	skipped, nested, kept := 0, 0, 0
	for _, fe := range files {
		fname := fe.Name()
		switch {
		case strings.HasPrefix(fname, "."):
		case fe.Type()&fs.ModeSymlink != 0:
			ws.add(filepath.Join(sub, fname), 0, symlinkSkipped)
		case fe.IsDir():
			nested++
		case !isExampleFile(fe):
			skipped++
		default:
			ok, err := readExampleFile(root, filepath.Join(name, fname), label, opt, ws, fn)
			if err != nil {
				return err
			}
			if ok {
				kept++
			}
		}
	}
	if skipped > 0 {
		ws.add(sub, 0, "%s skipped: only .txt files and files without extension are examples", wording.Count(skipped, "file", "files"))
	}
	if nested > 0 {
		ws.add(sub, 0, "%s ignored: put example files directly in the label folder", wording.Count(nested, "sub-folder", "sub-folders"))
	}
	if kept == 0 {
		ws.add(sub, 0, "label folder holds no examples")
	}
	return nil
}

// pathless is err without the path an *fs.PathError repeats (the message
// names the file already).
func pathless(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// readExampleFile reads the example file root/rel with label and hands it
// to fn; ok is false for a file skipped with a warning (an empty text).
func readExampleFile(root, rel, label string, opt Options, ws *warnings, fn func(Example) error) (ok bool, err error) {
	full := filepath.Join(root, rel)
	text, long, err := readFileLimited(full, opt.MaxTextBytes)
	if err != nil {
		return false, kindError(ErrEmpty, "corpus: %s: the example file cannot be read (%v): make it readable, or move it out of the data folder", full, pathless(err))
	}
	if long {
		ws.add(full, 0, "text longer than %d bytes truncated (raise --max-text-bytes to keep more)", opt.MaxTextBytes)
		text = truncate(text, opt.MaxTextBytes)
	}
	e, ok, err := makeExample(text, label, full, rel, 1, 1, opt, ws)
	if err != nil || !ok {
		return false, err
	}
	e.Line = 0
	return true, fn(e)
}

// readFileLimited reads at most max+4 bytes; long reports that the file is
// longer than max.
func readFileLimited(path string, max int) (string, bool, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", false, err
	}
	defer f.Close()
	b, err := io.ReadAll(io.LimitReader(f, int64(max)+4))
	if err != nil {
		return "", false, err
	}
	return string(b), len(b) > max, nil
}

// needsHeader says what the header row of a CSV or TSV file names: the
// text and label columns, or for texts to label (unlabeled) the text
// column alone.
func needsHeader(unlabeled bool) string {
	if unlabeled {
		return "it needs a header row naming the text column (and the label column, if the file has labels)"
	}
	return "it needs a header row naming the text and label columns"
}

// notObject is the error for a JSON Lines line that json.Unmarshal could
// not read as an object (err): it names what the line holds instead, in
// JSON's words rather than Go's, and the fix. A line that starts a JSON
// array is most often the first line of a JSON file (one array of
// objects), which is not JSON Lines.
func notObject(b []byte, path string, line int, err error) error {
	const fix = `write one object per line, like {"text": "...", "label": "..."}`
	t := bytes.TrimSpace(b)
	var te *json.UnmarshalTypeError
	switch {
	case len(t) > 0 && t[0] == '[':
		return errAt(path, line, ErrFormat, "the line holds a JSON array, not an object: the file looks like one JSON array rather than JSON Lines; "+
			"convert it to one object per line, e.g. jq -c '.[]' FILE > FILE.jsonl")
	case errors.As(err, &te):
		return errAt(path, line, ErrFormat, "the line holds a JSON %s, not an object: %s", te.Value, fix)
	}
	return errAt(path, line, ErrFormat, "not a JSON object (%v): %s", err, fix)
}
