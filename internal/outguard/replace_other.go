//go:build !linux

package outguard

// inodeFlags is Linux's check of chattr flags; elsewhere there is none.
func inodeFlags(path string) (why, fix string) { return "", "" }
