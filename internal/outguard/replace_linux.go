//go:build linux

package outguard

import (
	"os"

	"golang.org/x/sys/unix"
)

// The inode flags of chattr that make a file refuse a rename over it
// (linux/fs.h).
const (
	immutableFlag  = 0x10 // FS_IMMUTABLE_FL, chattr +i
	appendOnlyFlag = 0x20 // FS_APPEND_FL, chattr +a
)

// inodeFlags says why the existing regular file at path cannot be
// replaced by its chattr flags, and the fix; "" when neither flag is set
// or the flags cannot be read (a file system without them).
func inodeFlags(path string) (why, fix string) {
	f, err := os.Open(path)
	if err != nil {
		return "", ""
	}
	defer f.Close()
	flags, err := unix.IoctlGetUint32(int(f.Fd()), unix.FS_IOC_GETFLAGS)
	switch {
	case err != nil:
		return "", ""
	case flags&immutableFlag != 0:
		return "it is marked immutable (chattr +i)", "clear the mark (chattr -i " + path + ")"
	case flags&appendOnlyFlag != 0:
		return "it is marked append-only (chattr +a)", "clear the mark (chattr -a " + path + ")"
	}
	return "", ""
}
