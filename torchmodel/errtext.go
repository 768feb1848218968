package torchmodel

import (
	"errors"
	"strings"
)

// quietError is an error whose message leaves out the text of the sentinel
// it wraps: the message already names the file and the fix, and the
// sentinel's own words ("torchmodel: vocabulary or labels do not fit")
// would only repeat them. errors.Is still finds the sentinel.
type quietError struct {
	msg string
	err error
}

func (e *quietError) Error() string { return e.msg }
func (e *quietError) Unwrap() error { return e.err }

// plain returns err with the text of the innermost error it wraps (a
// sentinel) cut from the end of its message, where %w put it; an error
// that wraps nothing, or whose message does not end so, is returned as is.
func plain(err error) error {
	if err == nil {
		return nil
	}
	leaf := err
	for {
		next := errors.Unwrap(leaf)
		if next == nil {
			break
		}
		leaf = next
	}
	if leaf == err {
		return err
	}
	msg, suffix := err.Error(), ": "+leaf.Error()
	if !strings.HasSuffix(msg, suffix) || len(msg) == len(suffix) {
		return err
	}
	return &quietError{msg: strings.TrimSuffix(msg, suffix), err: err}
}
