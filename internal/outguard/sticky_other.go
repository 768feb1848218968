//go:build !unix

package outguard

import "os"

// stickyOwner is the check of a sticky folder's rule where there is one.
func stickyOwner(fi, di os.FileInfo) string { return "" }
