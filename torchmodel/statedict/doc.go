// Package statedict reads the state_dict of a PyTorch module from the file
// torch.save wrote, without Python and without running anything the file
// asks for.
//
// # Formats
//
// Since PyTorch 1.6, torch.save writes a zip archive: one folder holding
// data.pkl (a pickle of the object, protocol 2 by default), data/KEY (the raw
// bytes of each storage) and, since 1.10, byteorder. Files written with
// _use_new_zipfile_serialization=False, and by PyTorch before 1.6, are the
// legacy format: a sequence of pickles followed by the storages. Read accepts
// both.
//
// # A pickle reader that only builds data
//
// A pickle is a small program; Python's reader runs it, calling whatever
// function it names. This package has its own reader of the subset of the
// pickle protocol torch.save uses (protocol 2, plus the data-only opcodes of
// protocols 3 and 4; see pickle.go). It builds only numbers, strings, tuples,
// lists, dictionaries, storages and tensors. A GLOBAL may name only
// collections.OrderedDict, torch._utils._rebuild_tensor_v2,
// torch._utils._rebuild_tensor, torch._utils._rebuild_parameter and the
// torch.*Storage classes; a REDUCE may call only the Go implementations of
// those functions. Any other global (os.system, a user's module class,
// builtins.eval, …) is refused with an error naming it (ErrRefused), and
// opcodes that build class instances are refused too. Every length in the
// input is checked against the bytes left before anything is allocated, and
// every tensor view against its storage, so a damaged or hostile file costs
// at most a small multiple of its size in memory and ends in an error.
//
// The library github.com/nlpodyssey/gopickle was considered: its reader
// accepts the whole protocol, builds generic objects for unknown classes in
// its PyTorch loader, and allocates whatever a length field announces, so it
// could not be restricted enough without rewriting it.
//
// # Result
//
// Read returns the named tensors in file order, converted to float32
// row-major (float64 rounded to nearest; float16 and bfloat16 exact), int64
// tensors (a module's integer buffers) as int64, strided views made
// contiguous; tensors of other integer types and booleans by shape only. A checkpoint dictionary ({"epoch": …,
// "model_state_dict": …}) is accepted when exactly one of its entries is a
// dictionary of tensors, or when Options.Entry names it.
package statedict
