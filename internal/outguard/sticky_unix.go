//go:build unix

package outguard

import (
	"os"
	"syscall"
)

// stickyOwner says why the existing file fi in the folder dir (of status
// di) cannot be replaced by this process: the folder is sticky (chmod +t,
// as /tmp is) and neither the file nor the folder is this user's, so a
// rename over the file is refused; "" otherwise (and always for root).
func stickyOwner(fi, di os.FileInfo) string {
	euid := os.Geteuid()
	fs, ok1 := fi.Sys().(*syscall.Stat_t)
	ds, ok2 := di.Sys().(*syscall.Stat_t)
	if euid == 0 || !ok1 || !ok2 || di.Mode()&os.ModeSticky == 0 {
		return ""
	}
	if int(fs.Uid) == euid || int(ds.Uid) == euid {
		return ""
	}
	return "it belongs to another user, in a folder where only a file's owner may replace it (chmod +t)"
}
