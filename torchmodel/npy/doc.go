// Package npy writes and reads NumPy's array files: .npy (one array: a magic
// string, a header that is a Python dict literal naming the element type,
// the order and the shape, then the raw values) and .npz (a zip archive of
// .npy files, as numpy.savez writes it). The format is specified in NumPy's
// documentation, numpy.lib.format.
//
// It writes float32 and int64 arrays in C order and reads C-order float32,
// float64 and int64 arrays, which is what handing weights (and integer
// buffers) to and from PyTorch needs: NumPy
// reads the files without pickle (numpy.load(..., allow_pickle=False)).
package npy
