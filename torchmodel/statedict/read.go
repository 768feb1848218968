package statedict

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"sort"
	"strings"

	"telltale/internal/inputfile"
)

// Sentinel errors; every error of Read wraps exactly one and names the file.
var (
	// ErrNotTorch: the file is not written by torch.save (or is truncated
	// before its format can be recognised).
	ErrNotTorch = errors.New("statedict: not a PyTorch file")
	// ErrDamaged: the file has the form of a torch.save file but is
	// truncated or inconsistent.
	ErrDamaged = errors.New("statedict: damaged PyTorch file")
	// ErrRefused: the pickle asks for something other than tensors and
	// containers (a class, a function); nothing of it was run.
	ErrRefused = errors.New("statedict: refused pickle content")
	// ErrNoStateDict: the file holds no dictionary of named tensors, or
	// several and no Entry says which.
	ErrNoStateDict = errors.New("statedict: no state_dict in the file")
)

// StateDict is the named tensors of a PyTorch module's state_dict, in the
// order the file lists them.
type StateDict struct {
	Keys    []string
	Tensors map[string]*Tensor
	// Entry is the key of the checkpoint dictionary that held the
	// state_dict, or "" when the file is the state_dict itself.
	Entry string
	// Format is "zip" (torch.save since PyTorch 1.6) or "legacy" (the
	// earlier format, still written with _use_new_zipfile_serialization=False).
	Format string
}

// Options controls Read.
type Options struct {
	// Entry names the entry of a checkpoint dictionary that holds the
	// state_dict (e.g. "model_state_dict"). Empty: the file itself when it
	// is a dictionary of tensors, else its only entry that is one.
	Entry string
	// Progress, when set, is called with the bytes of tensor data read so
	// far and the total.
	Progress func(done, total int64)
}

// maxPickle bounds the size of the pickle (the structure, not the tensor
// data) read into memory; a state_dict's is a few kilobytes.
const maxPickle = 256 << 20

// Read reads the state_dict that torch.save wrote to file. The pickle in
// it is read by a reader that builds only tensors, their storages and
// containers (see the package documentation); anything else is refused
// naming what it asked for. Tensors of float32, float64, float16 and
// bfloat16 are converted to float32 (float64 rounded to nearest).
func Read(ctx context.Context, file string, opt Options) (*StateDict, error) {
	f, err := inputfile.Open(file)
	if err != nil {
		return nil, fmt.Errorf("statedict: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("statedict: %w", err)
	}
	if st.IsDir() {
		return nil, fmt.Errorf("statedict: %s is a folder: give the file torch.save wrote: %w", file, ErrNotTorch)
	}
	var head [4]byte
	n, _ := io.ReadFull(f, head[:])
	var sd *StateDict
	switch {
	case n == 4 && string(head[:]) == "PK\x03\x04":
		sd, err = readZip(ctx, f, st.Size(), opt)
	case n >= 2 && head[0] == 0x80 && head[1] <= 5:
		sd, err = readLegacy(ctx, f, st.Size(), opt)
	case n == 0:
		err = fmt.Errorf("the file is empty: %w", ErrNotTorch)
	default:
		err = fmt.Errorf("neither a zip archive nor a pickle (it starts with % x): give the file torch.save wrote: %w", head[:n], ErrNotTorch)
	}
	if err != nil {
		return nil, fmt.Errorf("statedict: %s: %w", file, err)
	}
	return sd, nil
}

// readZip reads the format of torch.save since PyTorch 1.6: a zip archive
// with one folder holding data.pkl (the pickle), data/KEY (one file per
// storage, its raw bytes) and, since 1.10, byteorder.
func readZip(ctx context.Context, f *os.File, size int64, opt Options) (*StateDict, error) {
	zr, err := zip.NewReader(f, size)
	if err != nil {
		return nil, fmt.Errorf("a zip archive that is truncated or damaged (%v): save or copy it again: %w", err, ErrDamaged)
	}
	files := map[string]*zip.File{}
	var pkl []string
	for _, zf := range zr.File {
		files[zf.Name] = zf
		if dir, base := path.Split(zf.Name); base == "data.pkl" && strings.Count(dir, "/") == 1 {
			pkl = append(pkl, zf.Name)
		}
	}
	if len(pkl) != 1 {
		return nil, fmt.Errorf("a zip archive with %d data.pkl entries, not one: not written by torch.save: %w", len(pkl), ErrNotTorch)
	}
	dir := path.Dir(pkl[0])
	order := binary.ByteOrder(binary.LittleEndian)
	if zf := files[dir+"/byteorder"]; zf != nil {
		b, err := readEntry(zf, 16)
		if err != nil {
			return nil, err
		}
		switch string(b) {
		case "little":
		case "big":
			order = binary.BigEndian
		default:
			return nil, fmt.Errorf("%s holds %q, not little or big: %w", zf.Name, b, ErrDamaged)
		}
	}
	data, err := readEntry(files[pkl[0]], maxPickle)
	if err != nil {
		return nil, err
	}
	storages := map[string]*storageRef{}
	u := &unpickler{data: data, persistent: func(pid any) (any, error) {
		t, ok := pid.(tuple)
		if !ok || len(t) != 5 {
			return nil, fmt.Errorf("a persistent id that is not the 5-tuple of a storage")
		}
		return storageOf(t, storages)
	}}
	root, err := u.load()
	if err != nil {
		return nil, pickleErr(pkl[0], err)
	}
	sd, refs, err := pick(root, opt.Entry)
	if err != nil {
		return nil, err
	}
	sd.Format = "zip"
	load := func(s *storageRef) ([]byte, error) {
		zf := files[dir+"/data/"+s.key]
		if zf == nil {
			return nil, fmt.Errorf("storage %s of the pickle has no entry data/%s in the archive: %w", s.key, s.key, ErrDamaged)
		}
		want := uint64(s.numel) * uint64(s.dtype.Size())
		if zf.UncompressedSize64 != want {
			return nil, fmt.Errorf("%s has %d bytes, its storage needs %d (%d %s values): %w", zf.Name, zf.UncompressedSize64, want, s.numel, s.dtype, ErrDamaged)
		}
		return readEntry(zf, want)
	}
	if err := fill(ctx, sd, refs, load, order, opt.Progress); err != nil {
		return nil, err
	}
	return sd, nil
}

// readEntry reads a whole archive entry of at most limit bytes, checking
// its CRC-32.
func readEntry(zf *zip.File, limit uint64) ([]byte, error) {
	if zf.UncompressedSize64 > limit {
		return nil, fmt.Errorf("%s is %d bytes, more than the %d expected: %w", zf.Name, zf.UncompressedSize64, limit, ErrDamaged)
	}
	rc, err := zf.Open()
	if err != nil {
		return nil, fmt.Errorf("%s: %v: %w", zf.Name, err, ErrDamaged)
	}
	defer rc.Close()
	b := make([]byte, zf.UncompressedSize64)
	if _, err := io.ReadFull(rc, b); err != nil {
		return nil, fmt.Errorf("%s: %v (truncated?): %w", zf.Name, err, ErrDamaged)
	}
	// Reading to the end makes archive/zip compare the CRC-32.
	var one [1]byte
	if n, err := rc.Read(one[:]); n != 0 || err != io.EOF {
		if err == nil || err == io.EOF {
			err = errors.New("longer than its header says")
		}
		return nil, fmt.Errorf("%s: %v: %w", zf.Name, err, ErrDamaged)
	}
	return b, nil
}

// storageOf resolves the persistent id ('storage', storage_type, key,
// location, numel[, view_metadata]) of a storage, one storageRef per key.
func storageOf(t tuple, storages map[string]*storageRef) (*storageRef, error) {
	tag, _ := t[0].(string)
	typ, ok1 := t[1].(storageType)
	key, ok2 := t[2].(string)
	_, ok3 := t[3].(string)
	numel, ok4 := t[4].(int64)
	if tag != "storage" || !ok1 || !ok2 || !ok3 || !ok4 || numel < 0 || key == "" {
		return nil, fmt.Errorf("a persistent id that is not ('storage', type, key, location, size)")
	}
	if s, ok := storages[key]; ok {
		if s.dtype != typ.dtype || s.numel != numel {
			return nil, fmt.Errorf("storage %s named twice with different types or sizes", key)
		}
		return s, nil
	}
	s := &storageRef{key: key, dtype: typ.dtype, numel: numel}
	storages[key] = s
	return s, nil
}

// pickErr turns a pickle error into an error naming where it happened and
// wrapping the right sentinel.
func pickleErr(where string, err error) error {
	var pe *pickleError
	if errors.As(err, &pe) && pe.global != "" {
		return fmt.Errorf("%s: %v: %w", where, err, ErrRefused)
	}
	return fmt.Errorf("%s: %v: %w", where, err, ErrDamaged)
}

// pick finds the state_dict in the unpickled root: the root itself when
// it maps names to tensors, else the entry named entry, else its only
// entry that does.
func pick(root any, entry string) (*StateDict, []*tensorRef, error) {
	d, ok := root.(*dict)
	if !ok {
		return nil, nil, fmt.Errorf("the file holds a %s, not a dictionary of named tensors: save model.state_dict(): %w", kind(root), ErrNoStateDict)
	}
	if entry == "" {
		if sd, refs, ok := tensorsOf(d); ok {
			return sd, refs, nil
		}
	}
	var names []string
	for i, k := range d.keys {
		name, isStr := k.(string)
		sub, isDict := d.vals[i].(*dict)
		if !isStr || !isDict {
			continue
		}
		if entry != "" && name == entry {
			sd, refs, ok := tensorsOf(sub)
			if !ok {
				return nil, nil, fmt.Errorf("entry %q is not a dictionary of named tensors: %w", entry, ErrNoStateDict)
			}
			sd.Entry = name
			return sd, refs, nil
		}
		if _, _, ok := tensorsOf(sub); ok {
			names = append(names, name)
		}
	}
	var top []string
	for _, k := range d.keys {
		if s, ok := k.(string); ok {
			top = append(top, fmt.Sprintf("%q", s))
		}
	}
	sort.Strings(top)
	switch {
	case entry != "":
		return nil, nil, fmt.Errorf("no entry %q; the file's entries are %s: %w", entry, strings.Join(top, ", "), ErrNoStateDict)
	case len(names) == 1:
		sd, refs, _ := tensorsOf(d.vals[indexOf(d, names[0])].(*dict))
		sd.Entry = names[0]
		return sd, refs, nil
	case len(names) > 1:
		return nil, nil, fmt.Errorf("a checkpoint with %d dictionaries of tensors (%s): name the model's with the entry option: %w", len(names), strings.Join(names, ", "), ErrNoStateDict)
	}
	return nil, nil, fmt.Errorf("a dictionary without named tensors (entries: %s): save model.state_dict(): %w", strings.Join(top, ", "), ErrNoStateDict)
}

func indexOf(d *dict, key string) int {
	for i, k := range d.keys {
		if k == key {
			return i
		}
	}
	return -1
}

// tensorsOf reports whether d maps strings to tensors (at least one), and
// if so returns them.
func tensorsOf(d *dict) (*StateDict, []*tensorRef, bool) {
	if len(d.keys) == 0 {
		return nil, nil, false
	}
	sd := &StateDict{Tensors: make(map[string]*Tensor, len(d.keys))}
	refs := make([]*tensorRef, 0, len(d.keys))
	for i, k := range d.keys {
		name, ok1 := k.(string)
		t, ok2 := d.vals[i].(*tensorRef)
		if !ok1 || !ok2 {
			return nil, nil, false
		}
		sd.Keys = append(sd.Keys, name)
		refs = append(refs, t)
	}
	return sd, refs, true
}

// fill reads the storages the tensors use, each once, and converts every
// tensor to float32. A storage's bytes are dropped after its last tensor.
func fill(ctx context.Context, sd *StateDict, refs []*tensorRef, load func(*storageRef) ([]byte, error), order binary.ByteOrder, progress func(done, total int64)) error {
	uses := map[*storageRef]int{}
	var total, done int64
	for _, r := range refs {
		if uses[r.storage] == 0 {
			total += r.storage.numel * int64(r.storage.dtype.Size())
		}
		uses[r.storage]++
	}
	loaded := map[*storageRef][]byte{}
	for i, r := range refs {
		if err := ctx.Err(); err != nil {
			return err
		}
		t := &Tensor{Dtype: r.storage.dtype, Shape: make([]int, len(r.shape))}
		for k, s := range r.shape {
			t.Shape[k] = int(s)
		}
		sd.Tensors[sd.Keys[i]] = t
		if !r.storage.dtype.IsFloat() && r.storage.dtype != Int64 {
			continue // kept by name only: never part of a sentence CNN
		}
		b, ok := loaded[r.storage]
		if !ok {
			var err error
			if b, err = load(r.storage); err != nil {
				return fmt.Errorf("tensor %s: %w", sd.Keys[i], err)
			}
			loaded[r.storage] = b
			done += int64(len(b))
			if progress != nil {
				progress(done, total)
			}
		}
		if r.storage.dtype == Int64 {
			t.Ints = materializeInts(r, b, order)
		} else {
			t.Data = materialize(r, b, order)
		}
		if uses[r.storage]--; uses[r.storage] == 0 {
			delete(loaded, r.storage)
		}
	}
	return nil
}

// The legacy format (before PyTorch 1.6) is a sequence of pickles: a magic
// number, the protocol version 1001, a dictionary of system facts, the
// object itself and the list of storage keys; then each storage in that
// order as its element count (int64, little-endian) and its bytes.
var legacyMagic = bigInt{0x6c, 0xfc, 0x9c, 0x46, 0xf9, 0x20, 0x6a, 0xa8, 0x50, 0x19}

func readLegacy(ctx context.Context, f *os.File, size int64, opt Options) (*StateDict, error) {
	data := make([]byte, size)
	if _, err := f.ReadAt(data, 0); err != nil {
		return nil, fmt.Errorf("%v: %w", err, ErrDamaged)
	}
	u := &unpickler{data: data}
	next := func(what string) (any, error) {
		v, err := u.load()
		if err != nil {
			return nil, fmt.Errorf("the %s: %v: %w", what, err, ErrDamaged)
		}
		u.stack, u.marks = u.stack[:0], u.marks[:0]
		return v, nil
	}
	magic, err := next("magic number")
	if m, ok := magic.(bigInt); err != nil || !ok || !bytes.Equal(m, legacyMagic) {
		return nil, fmt.Errorf("a pickle, but not one torch.save wrote (no magic number): %w", ErrNotTorch)
	}
	if v, err := next("protocol version"); err != nil || v != int64(1001) {
		return nil, fmt.Errorf("legacy protocol version %v, not 1001: %w", v, ErrDamaged)
	}
	if _, err := next("system information"); err != nil {
		return nil, err
	}
	storages := map[string]*storageRef{}
	u.persistent = func(pid any) (any, error) {
		t, ok := pid.(tuple)
		if !ok || len(t) != 6 {
			return nil, fmt.Errorf("a persistent id that is not the 6-tuple of a storage")
		}
		if t[5] != nil {
			return nil, fmt.Errorf("a storage view (view_metadata): re-save the file with a current PyTorch")
		}
		return storageOf(t[:5], storages)
	}
	start := u.pos
	root, err := u.load()
	if err != nil {
		var pe *pickleError
		if errors.As(err, &pe) {
			pe.offset -= start
		}
		return nil, pickleErr("the pickle", err)
	}
	u.persistent = nil
	u.stack, u.marks = u.stack[:0], u.marks[:0]
	at, err := legacyStorages(u, next, storages)
	if err != nil {
		return nil, err
	}
	sd, refs, err := pick(root, opt.Entry)
	if err != nil {
		return nil, err
	}
	sd.Format = "legacy"
	load := func(s *storageRef) ([]byte, error) {
		b, ok := at[s]
		if !ok {
			return nil, fmt.Errorf("storage %s is not in the file: %w", s.key, ErrDamaged)
		}
		return b, nil
	}
	if err := fill(ctx, sd, refs, load, binary.LittleEndian, opt.Progress); err != nil {
		return nil, err
	}
	return sd, nil
}

// legacyStorages reads the list of storage keys after the object's pickle
// and locates each storage's bytes in the data that follows.
func legacyStorages(u *unpickler, next func(string) (any, error), storages map[string]*storageRef) (map[*storageRef][]byte, error) {
	keysV, err := next("list of storage keys")
	if err != nil {
		return nil, err
	}
	kl, ok := keysV.(*list)
	if !ok {
		return nil, fmt.Errorf("the list of storage keys is a %s: %w", kind(keysV), ErrDamaged)
	}
	at := map[*storageRef][]byte{}
	pos := u.pos
	for _, k := range kl.items {
		key, _ := k.(string)
		s := storages[key]
		if s == nil {
			return nil, fmt.Errorf("storage key %v is not in the pickle: %w", k, ErrDamaged)
		}
		if len(u.data)-pos < 8 {
			return nil, fmt.Errorf("truncated in the header of storage %s: %w", key, ErrDamaged)
		}
		n := binary.LittleEndian.Uint64(u.data[pos:])
		pos += 8
		if n != uint64(s.numel) || n > uint64(len(u.data)-pos)/uint64(s.dtype.Size()) {
			return nil, fmt.Errorf("storage %s: %d elements stored, %d expected, %d bytes left (truncated?): %w", key, n, s.numel, len(u.data)-pos, ErrDamaged)
		}
		nb := int(n) * s.dtype.Size()
		at[s] = u.data[pos : pos+nb]
		pos += nb
	}
	return at, nil
}
