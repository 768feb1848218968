package torchmodel

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"

	"telltale/cnn"
	"telltale/internal/atomicfile"
	"telltale/torchmodel/npy"
)

// The files Export writes into its folder.
const (
	WeightsFile   = "state_dict.npz"
	VocabFile     = "vocab.txt"
	LabelsFile    = "labels.txt"
	TokenizerFile = "tokenizer.json" // only for models with a tokenizer file
)

// ExportFiles lists the files Export writes for m into dir.
func ExportFiles(m *cnn.Model, dir string) []string {
	files := []string{filepath.Join(dir, WeightsFile), filepath.Join(dir, VocabFile), filepath.Join(dir, LabelsFile)}
	if len(m.Tokenizer.FileJSON) > 0 {
		files = append(files, filepath.Join(dir, TokenizerFile))
	}
	return files
}

// StateDict returns m's weights as the state_dict of the PyTorch module in
// the README ("Bring your own model"), in that module's order:
//
//	embedding.weight   [VocabSize, WordDim]    nn.Embedding, padding_idx=0
//	chars.…                                    the character layer (Config.Chars only)
//	convs.B.weight     [Filters, Dim, Width]   nn.Conv1d, one per width B
//	convs.B.bias       [Filters]
//	output.weight      [Classes, NumFilters]   nn.Linear
//	output.bias        [Classes]
//	wide.weight        [VocabSize, Classes]    nn.EmbeddingBag, mode="mean",
//	                                           padding_idx=0 (Config.Wide only)
//	wide_bigram.weight [Bigrams, Classes]      nn.Embedding (Config.WideBigrams only)
//	bigram_keys        [Bigrams] int64         a buffer: the pairs' keys
//
// wide.weight is the wide path's word-weight table (cnn.Model.Wide, laid
// out [word][class] as the bag's rows): the module adds the mean of the
// rows of a text's non-padding ids to the logits, or the unknown word's row
// (id 1) for a text with none, which is telltale's wide term. With bigram
// weights, wide_bigram.weight is cnn.Model.WideBigram and bigram_keys its
// sorted keys a·2³²+b (cnn.BigramKey) of the pairs of adjacent ids (a, b):
// the module's mean then runs over the text's non-padding ids and its
// pairs found among the keys. A model whose bigram set is empty is
// exported as one without bigram weights, whose logits are the same.
// A masked filter's column of output.weight is zero: its pooled value, which
// telltale holds at zero, then adds nothing to any logit, so the logits are
// the same.
//
// WordDim is Dim less the character filters of a model with a character
// layer (train --chars), whose word vector is the table's row followed by
// the character part; the module computes that part with the layer
// (charStateDict) rather than reading it from the table, so that words
// outside the vocabulary get theirs as telltale gives it
// (cnn.Model.WithUnseen). Without a character layer WordDim is Dim.
func StateDict(m *cnn.Model) []npy.Array {
	cfg := m.Config
	d, wd, nf := cfg.Dim, cfg.WordDim(), cfg.NumFilters()
	table := m.Emb
	if wd != d {
		table = make([]float32, cfg.VocabSize*wd)
		for r := range cfg.VocabSize {
			copy(table[r*wd:(r+1)*wd], m.Row(int32(r))[:wd])
		}
	}
	arrays := []npy.Array{{Name: "embedding.weight", Shape: []int{cfg.VocabSize, wd}, Data: table}}
	if cfg.Chars != nil {
		arrays = append(arrays, charStateDict(m)...)
	}
	for b, c := range m.Convs {
		arrays = append(arrays,
			npy.Array{Name: fmt.Sprintf("convs.%d.weight", b), Shape: []int{cfg.Filters, d, c.Width}, Data: toConv1d(c.W, cfg.Filters, c.Width, d)},
			npy.Array{Name: fmt.Sprintf("convs.%d.bias", b), Shape: []int{cfg.Filters}, Data: c.B})
	}
	out := append([]float32(nil), m.OutW...)
	for g := 0; g < nf; g++ {
		if m.IsMasked(g) {
			for c := 0; c < cfg.Classes; c++ {
				out[c*nf+g] = 0
			}
		}
	}
	arrays = append(arrays,
		npy.Array{Name: "output.weight", Shape: []int{cfg.Classes, nf}, Data: out},
		npy.Array{Name: "output.bias", Shape: []int{cfg.Classes}, Data: m.OutB})
	if cfg.Wide {
		arrays = append(arrays, npy.Array{Name: WideKey, Shape: []int{cfg.VocabSize, cfg.Classes}, Data: m.Wide})
	}
	if n := len(m.Bigrams); cfg.WideBigrams && n > 0 {
		keys := make([]int64, n)
		for i, k := range m.Bigrams {
			keys[i] = int64(k) // both ids are below 2³¹
		}
		arrays = append(arrays, npy.Array{Name: WideBigramKey, Shape: []int{n, cfg.Classes}, Data: m.WideBigram},
			npy.Array{Name: BigramKeysKey, Shape: []int{n}, Ints: keys})
	}
	return arrays
}

// toConv1d turns telltale's filter layout [filter][slot][dim] into
// nn.Conv1d's [filter][dim][slot].
func toConv1d(src []float32, filters, width, dim int) []float32 {
	w := make([]float32, len(src))
	for f := 0; f < filters; f++ {
		for s := 0; s < width; s++ {
			for j := 0; j < dim; j++ {
				w[(f*dim+j)*width+s] = src[(f*width+s)*dim+j]
			}
		}
	}
	return w
}

// WideKey is the state_dict key of the wide path's word-weight table, as
// StateDict writes it and DetectLayout recognises it.
const WideKey = "wide.weight"

// WideBigramKey and BigramKeysKey are the state_dict keys of the bigram
// weights of the wide path and of their pairs' keys, as StateDict writes
// them.
const (
	WideBigramKey = "wide_bigram.weight"
	BigramKeysKey = "bigram_keys"
)

// CanExport reports why m cannot be exported, or nil. Every model that
// cnn.Load accepts can be; a character layer (Config.Chars) needs the
// layer's weights (Model.Char) and the model's vocabulary, which a loaded
// model has.
func CanExport(m *cnn.Model) error {
	if m.Config.Chars != nil && (m.Char == nil || len(m.Vocab) != m.Config.VocabSize) {
		return plain(fmt.Errorf("torchmodel: the model's character layer has no weights or no vocabulary to spell its words from: load it from its model file (cnn.Load): %w", ErrLayout))
	}
	return nil
}

// Export writes m as the folder dir: WeightsFile (the StateDict as NumPy's
// .npz, read without pickle), VocabFile (one token per line, id = line
// number from 0; line 0 is the padding token, line 1 the unknown token),
// LabelsFile (the class names in output order) and, for a model with a
// tokenizer file, TokenizerFile. dir's parent must exist; dir itself may
// not, or be empty, or hold an earlier export's files alone (CheckExportDir).
// The files are written into a new folder beside dir, which then takes
// dir's place, so dir never holds a mix of two exports or a part of one.
// A model whose words or labels contain a line break cannot be written one
// per line and is refused before anything is written.
func Export(m *cnn.Model, dir string) error { return ExportContext(context.Background(), m, dir) }

// ExportContext is Export that gives up before the new folder takes dir's
// place when ctx is done (an interrupt), leaving dir as it was.
func ExportContext(ctx context.Context, m *cnn.Model, dir string) (err error) {
	defer func() { err = plain(err) }()
	if err := CanExport(m); err != nil {
		return err
	}
	if len(m.Vocab) != m.Config.VocabSize {
		return fmt.Errorf("torchmodel: the model has no vocabulary to export: %w", ErrVocab)
	}
	for id, w := range m.Vocab {
		if strings.ContainsAny(w, "\r\n") || w == "" {
			return fmt.Errorf("torchmodel: word %d (%q) is empty or holds a line break and cannot be one line of %s: %w", id, w, VocabFile, ErrVocab)
		}
	}
	for _, l := range m.Labels {
		if strings.ContainsAny(l, "\r\n") || l == "" {
			return fmt.Errorf("torchmodel: label %q is empty or holds a line break and cannot be one line of %s: %w", l, LabelsFile, ErrVocab)
		}
	}
	if err := CheckExportDir(dir); err != nil {
		return err
	}
	final, err := exportTarget(dir)
	if err != nil {
		return err
	}
	dir, err = os.MkdirTemp(filepath.Dir(final), "."+filepath.Base(final)+".*.tmp")
	if err != nil {
		return fmt.Errorf("torchmodel: %s: %w (is its folder there and writable?)", final, err)
	}
	defer func() {
		if err != nil {
			os.RemoveAll(dir)
		}
	}()
	mode := os.FileMode(0o755)
	if st, err := os.Stat(final); err == nil {
		mode = st.Mode().Perm() // an earlier export's folder keeps its permissions
	}
	if err := os.Chmod(dir, mode); err != nil {
		return fmt.Errorf("torchmodel: %w", err)
	}
	if err := writeExport(m, dir); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	return swapInto(dir, final)
}

// writeExport writes m's files into the new folder dir (Export).
func writeExport(m *cnn.Model, dir string) error {
	arrays := StateDict(m)
	if err := atomicfile.Write(filepath.Join(dir, WeightsFile), func(w io.Writer) error { return npy.WriteNPZ(w, arrays) }); err != nil {
		return fmt.Errorf("torchmodel: %w", err)
	}
	writeLines := func(name string, lines []string) error {
		return atomicfile.Write(filepath.Join(dir, name), func(w io.Writer) error {
			_, err := io.WriteString(w, strings.Join(lines, "\n")+"\n")
			return err
		})
	}
	if err := writeLines(VocabFile, m.Vocab); err != nil {
		return fmt.Errorf("torchmodel: %w", err)
	}
	if err := writeLines(LabelsFile, m.Labels); err != nil {
		return fmt.Errorf("torchmodel: %w", err)
	}
	if len(m.Tokenizer.FileJSON) > 0 {
		if err := atomicfile.Write(filepath.Join(dir, TokenizerFile), func(w io.Writer) error {
			_, err := w.Write(m.Tokenizer.FileJSON)
			return err
		}); err != nil {
			return fmt.Errorf("torchmodel: %w", err)
		}
	}
	return nil
}

// exportNames are the names of the files an export writes.
var exportNames = []string{WeightsFile, VocabFile, LabelsFile, TokenizerFile}

// CheckExportDir returns an error (wrapping ErrExportDir) when dir cannot
// take an export: it is a file, the working folder or one holding it, or a
// folder holding anything but an earlier export's files (a mix the new
// export would leave behind or overwrite). A missing or empty folder is
// fine.
func CheckExportDir(dir string) error {
	if _, err := exportTarget(dir); err != nil {
		return err
	}
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("torchmodel: %s: %w", dir, err)
	case !st.IsDir():
		return exportDirError(fmt.Sprintf("torchmodel: %s is a file, not a folder: give a folder", dir))
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("torchmodel: %s: %w", dir, err)
	}
	for _, e := range ents {
		if !slices.Contains(exportNames, e.Name()) {
			return exportDirError(fmt.Sprintf("torchmodel: the folder %s holds %s, which no export writes: give a new or empty folder, or one that holds an earlier export alone",
				dir, e.Name()))
		}
	}
	return nil
}

// ErrExportDir marks a folder that cannot take an export (CheckExportDir).
var ErrExportDir = errors.New("not a folder for an export")

// exportDirError is CheckExportDir's refusal, which is ErrExportDir.
type exportDirError string

func (e exportDirError) Error() string        { return string(e) }
func (e exportDirError) Is(target error) bool { return target == ErrExportDir }

// exportTarget is the folder an export to dir replaces: dir cleaned and
// absolute, or a link's target (the link kept, as files are written
// through links). The working folder itself (".") cannot be replaced.
func exportTarget(dir string) (string, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return "", fmt.Errorf("torchmodel: %s: %w", dir, err)
	}
	if real, err := filepath.EvalSymlinks(abs); err == nil {
		abs = real
	}
	if wd, err := os.Getwd(); err == nil && (abs == wd || strings.HasPrefix(wd, abs+string(filepath.Separator))) {
		return "", exportDirError(fmt.Sprintf("torchmodel: %s is the working folder or holds it, which an export cannot replace: give a folder in it, such as %s",
			dir, filepath.Join(dir, "exported")))
	}
	return abs, nil
}

// swapInto makes the folder tmp take final's place: a rename where final
// is missing or empty, else (final holds an earlier export,
// CheckExportDir) final is moved aside first and removed once tmp is in
// place; if tmp cannot take its place the earlier export is put back, and
// an error names where it is if that fails too.
func swapInto(tmp, final string) error {
	err := os.Rename(tmp, final)
	if err == nil || !(errors.Is(err, syscall.ENOTEMPTY) || errors.Is(err, syscall.EEXIST)) {
		if err != nil {
			return fmt.Errorf("torchmodel: %s: %w", final, err)
		}
		return nil
	}
	old, err := os.MkdirTemp(filepath.Dir(final), "."+filepath.Base(final)+".*.old")
	if err != nil {
		return fmt.Errorf("torchmodel: %s: %w", final, err)
	}
	os.Remove(old) // a free name to move the earlier export to
	if err := os.Rename(final, old); err != nil {
		return fmt.Errorf("torchmodel: moving the earlier export in %s aside: %w", final, err)
	}
	if err := os.Rename(tmp, final); err != nil {
		if berr := os.Rename(old, final); berr != nil {
			return fmt.Errorf("torchmodel: %s: %w; the earlier export is in %s", final, err, old)
		}
		return fmt.Errorf("torchmodel: %s: %w", final, err)
	}
	// The new export is in place; an earlier one that cannot be removed is
	// left hidden beside it rather than failing the export.
	os.RemoveAll(old)
	return nil
}
