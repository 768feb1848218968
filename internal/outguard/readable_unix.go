//go:build unix

package outguard

import "syscall"

// readable reports why the file at path cannot be read by this process,
// by its permission alone (access(2)), without opening it.
func readable(path string) error {
	return syscall.Access(path, 4) // R_OK
}
