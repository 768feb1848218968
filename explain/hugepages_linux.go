package explain

import (
	"syscall"
	"unsafe"
)

// hugePage is the size of a transparent huge page on amd64 and arm64.
const hugePage = 2 << 20

// largeFloats returns a zeroed slice of n float32 for a large read-mostly
// table, asking the kernel to back it with transparent huge pages where
// it allows them (madvise mode): the slot table is read at random, a row
// a token, and with 4 KiB pages nearly every row read misses the TLB.
// The advice is taken before the memory is first written, as a fresh
// large allocation is not yet touched; an allocation that reused touched
// memory, or a kernel that refuses, leaves ordinary pages and the same
// values.
func largeFloats(n int) []float32 {
	if 4*n < 4*hugePage {
		return make([]float32, n)
	}
	buf := make([]float32, n+hugePage/4)
	p := uintptr(unsafe.Pointer(unsafe.SliceData(buf)))
	off := (hugePage - p%hugePage) % hugePage
	s := buf[off/4 : off/4+uintptr(n)]
	region := unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(s))), (4*n)&^(hugePage-1))
	_ = syscall.Madvise(region, 14) // MADV_HUGEPAGE
	return s[:n:n]
}
