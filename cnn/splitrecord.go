package cnn

import (
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"os"
)

// ReadSplitRecord reads, from the header of the model file at path, how the
// model's splits were made (Info.Splits), without reading its weights; nil
// when the file records none. It checks the magic bytes, the format
// version and the header's length, but not the checksum: Load checks the
// whole file. path must be a regular file; a named pipe is read once, by
// Load, and is not for this.
func ReadSplitRecord(path string) (*SplitRecord, error) {
	var h struct {
		Info struct {
			Splits *SplitRecord `json:"splits"`
		} `json:"info"`
	}
	if err := decodeHeader(path, &h); err != nil {
		return nil, err
	}
	return h.Info.Splits, nil
}

// RecordsRecipe reports, from the header of the model file at path alone
// (as ReadSplitRecord reads it), whether the model records the recipe that
// trained it (Info.Recipe): a model made by train does, an imported one
// does not.
func RecordsRecipe(path string) (bool, error) {
	var h struct {
		Info struct {
			Recipe json.RawMessage `json:"recipe"`
		} `json:"info"`
	}
	if err := decodeHeader(path, &h); err != nil {
		return false, err
	}
	return len(h.Info.Recipe) > 0 && string(h.Info.Recipe) != "null", nil
}

// decodeHeader decodes the JSON header of the model file at path, a
// regular file, into v, checking the magic bytes, the format version and
// the header's length, but not the checksum.
func decodeHeader(path string, v any) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return err
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("cnn: model file %s is not a regular file", path)
	}
	var fixed [8 + 4 + 8]byte
	if _, err := io.ReadFull(f, fixed[:]); err != nil || string(fixed[:len(fileMagic)]) != fileMagic {
		return fmt.Errorf("cnn: model file %s: %w", path, ErrNotModel)
	}
	if v := binary.LittleEndian.Uint32(fixed[8:]); v == 0 || v > FormatVersion {
		return fmt.Errorf("cnn: model file %s: format version %d is not one this program reads", path, v)
	}
	hl := binary.LittleEndian.Uint64(fixed[12:])
	if hl > uint64(st.Size()) {
		return fmt.Errorf("cnn: model file %s: truncated header", path)
	}
	if err := json.NewDecoder(io.LimitReader(f, int64(hl))).Decode(v); err != nil {
		return fmt.Errorf("cnn: model file %s: header: %v", path, err)
	}
	return nil
}
