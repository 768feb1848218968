package corpus

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"io"
	"os"
	"sort"
	"strings"

	"telltale/internal/inputfile"
	"telltale/internal/wording"
)

// Columns returns the column names of the corpus file at path, for a
// column picker: the header of a CSV or TSV file, or the keys (sorted) of
// the first record of a JSON Lines file. A folder (format dir) has no
// columns: nil, nil. The format is chosen as by Load (opt.Format, else the
// extension). Errors name the file and line and wrap a sentinel.
func Columns(path string, opt Options) ([]string, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, kindError(ErrEmpty, "corpus: %s: cannot open: %v: check the path", path, err)
	}
	format := opt.Format
	if format == "" {
		format = detectFormat(path, st.IsDir())
	}
	if format == "dir" {
		return nil, nil
	}
	if st.IsDir() {
		return nil, errAt(path, 0, ErrFormat, "is a folder: a folder is read as one sub-folder per label (format dir)")
	}
	f, err := inputfile.Open(path)
	if err != nil {
		return nil, kindError(ErrEmpty, "corpus: %s: cannot open: %v", path, err)
	}
	defer f.Close()
	return readColumns(f, path, format, opt)
}

func readColumns(r io.Reader, path, format string, opt Options) ([]string, error) {
	if opt.MaxTextBytes <= 0 {
		opt.MaxTextBytes = DefaultMaxTextBytes
	}
	br := bufio.NewReaderSize(r, 64<<10)
	if err := skipBOM(br, path); err != nil {
		return nil, err
	}
	limit := recordLimitFactor * opt.MaxTextBytes
	switch format {
	case "csv", "tsv":
		cr := csv.NewReader(&limitReader{r: br, limit: limit})
		if format == "tsv" {
			cr.Comma, cr.LazyQuotes = '\t', true
		}
		header, err := cr.Read()
		if err == io.EOF {
			return nil, errAt(path, 0, ErrEmpty, "file is empty: %s", needsHeader(opt.Unlabeled))
		}
		if err != nil {
			return nil, errAt(path, 1, ErrFormat, "cannot read the header row (%v): the first line must name the columns, separated by %s", err, map[string]string{"csv": "commas", "tsv": "tabs"}[format])
		}
		names := make([]string, len(header))
		for i, h := range header {
			names[i] = strings.TrimSpace(h)
		}
		return names, nil
	case "jsonl":
		var buf []byte
		for line := 1; ; line++ {
			b, err := readLine(br, buf, limit)
			buf = b
			if err == io.EOF {
				return nil, errAt(path, 0, ErrEmpty, "file is empty: it needs one JSON object per line")
			}
			if err == errRecordLimit {
				return nil, errAt(path, line, ErrTooLong, "line longer than %d bytes: raise --max-text-bytes (limit is %d × it)", limit, recordLimitFactor)
			}
			if err != nil {
				return nil, kindError(ErrFormat, "corpus: %s line %d: read error: %v", path, line, err)
			}
			if len(bytes.TrimSpace(b)) == 0 {
				continue
			}
			var obj map[string]json.RawMessage
			if err := json.Unmarshal(b, &obj); err != nil {
				return nil, notObject(b, path, line, err)
			}
			keys := make([]string, 0, len(obj))
			for k := range obj {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			return keys, nil
		}
	case "":
		return nil, errAt(path, 0, ErrFormat, "cannot tell the format from the name: use a .csv, .tsv or .jsonl extension, or give the format (--format csv, tsv, jsonl or dir)")
	}
	return nil, errAt(path, 0, ErrFormat, "unknown format %q: use csv, tsv, jsonl or dir", format)
}

// ColumnsBytes is Columns for a file's content held in memory (a named
// pipe's, which can be read only once): name stands in for its path, in
// messages and for the format, as in LoadBytes.
func ColumnsBytes(name string, data []byte, opt Options) ([]string, error) {
	format := opt.Format
	if format == "" {
		format = detectFormat(name, false)
	}
	return readColumns(bytes.NewReader(data), name, format, opt)
}

// ReadPipe reads the named pipe at path whole, for ColumnsBytes and
// LoadBytes, since a pipe can be read only once; the wait for its writer,
// or for more from it, ends when ctx is done. A line longer than any
// record the readers accept (opt.MaxTextBytes, recordLimitFactor times)
// stops the read at once with their error, ErrTooLong, so that a pipe
// without line breaks is not held in memory whole before it is refused.
func ReadPipe(ctx context.Context, path string, opt Options) ([]byte, error) {
	if opt.MaxTextBytes <= 0 {
		opt.MaxTextBytes = DefaultMaxTextBytes
	}
	limit := recordLimitFactor * opt.MaxTextBytes
	data, err := inputfile.ReadFileBounded(ctx, path, limit)
	if long, ok := errors.AsType[*inputfile.LineTooLongError](err); ok {
		return nil, errAt(path, long.Line, ErrTooLong, "line longer than %d bytes: the file may lack line breaks; or raise --max-text-bytes (limit is %d × it)", limit, recordLimitFactor)
	}
	return data, err
}

// LoadBytes reads a corpus held in memory, as Load reads a file: data is
// the content of a CSV, TSV or JSON Lines file and name stands in for its
// path (in messages, Dataset.Path, and for the format when opt.Format is
// empty: its extension decides). The checks, warnings and errors are those
// of Load; the format dir is not possible.
func LoadBytes(name string, data []byte, opt Options) (*Dataset, []Warning, error) {
	if opt.MaxTextBytes <= 0 {
		opt.MaxTextBytes = DefaultMaxTextBytes
	}
	format := opt.Format
	if format == "" {
		format = detectFormat(name, false)
	}
	d := &Dataset{Path: name}
	ws := &warnings{path: name}
	counts := map[string]int{}
	var sample labelSample
	collect := func(e Example) error {
		sample.add(e.Label)
		d.Examples = append(d.Examples, e)
		if counts[e.Label] == 0 {
			d.Labels = append(d.Labels, e.Label)
		}
		counts[e.Label]++
		return nil
	}
	var err error
	switch format {
	case "csv", "tsv":
		err = readDelimited(bytes.NewReader(data), name, format, opt, ws, collect)
	case "jsonl":
		err = readJSONL(bytes.NewReader(data), name, opt, ws, collect)
	case "dir":
		return nil, nil, errAt(name, 0, ErrFormat, "a folder cannot be read from memory: use Load with the folder's path")
	case "":
		return nil, nil, errAt(name, 0, ErrFormat, "cannot tell the format from the name: use a .csv, .tsv or .jsonl extension, or give the format (--format csv, tsv or jsonl)")
	default:
		return nil, nil, errAt(name, 0, ErrFormat, "unknown format %q: use csv, tsv or jsonl", format)
	}
	if err != nil {
		return nil, ws.result(), sample.hint(err)
	}
	// The same final checks as Stream.
	if len(d.Examples) == 0 {
		return nil, ws.result(), errAt(name, 0, ErrEmpty, "no examples found: the file needs a header row and at least one record with a non-empty text")
	}
	if len(d.Labels) < 2 && !opt.Unlabeled && !opt.HeldOut {
		return nil, ws.result(), errAt(name, 0, ErrLabel, "only one label %s in %s: a classifier needs at least two labels; check the label column",
			quote(d.Labels[0]), wording.Count(len(d.Examples), "example", "examples"))
	}
	sort.Strings(d.Labels)
	return d, ws.result(), nil
}

// TokenLengths returns the number of tokens tok makes of each text of d,
// in example order (the lengths Summarize takes its percentiles of).
func TokenLengths(d *Dataset, tok *Tokenizer) []int {
	out := make([]int, len(d.Examples))
	for i, e := range d.Examples {
		out[i] = len(tok.Tokenize(e.Text))
	}
	return out
}

// LengthBin is one bar of a length histogram: the texts with Lo … Hi
// tokens (both included).
type LengthBin struct {
	Lo, Hi int
	Count  int
}

// LengthHistogram counts lengths (token counts, ≥ 0) in at most bins bins
// of equal integer width covering min … max of lengths; bins ≤ 0 means 30.
// The width is ⌈(max−min+1)/bins⌉, so every bin spans whole token counts
// and no length falls on an edge. It returns nil for no lengths.
func LengthHistogram(lengths []int, bins int) []LengthBin {
	if len(lengths) == 0 {
		return nil
	}
	if bins <= 0 {
		bins = 30
	}
	lo, hi := lengths[0], lengths[0]
	for _, n := range lengths {
		lo, hi = min(lo, n), max(hi, n)
	}
	span := hi - lo + 1
	width := (span + bins - 1) / bins
	nb := (span + width - 1) / width
	out := make([]LengthBin, nb)
	for b := range out {
		out[b].Lo = lo + b*width
		out[b].Hi = out[b].Lo + width - 1
	}
	for _, n := range lengths {
		out[(n-lo)/width].Count++
	}
	return out
}
