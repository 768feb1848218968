package torchmodel

import (
	"errors"
	"strings"

	"telltale/torchmodel/npy"
	"telltale/torchmodel/statedict"
)

// sentinels are the errors of this package and of the readers under it
// whose words plain may cut: each is a kind, named again by the message
// that wraps it. Any other innermost error (a *fs.PathError, ENOSPC) is
// the cause itself and stays in the message.
var sentinels = []error{
	ErrMismatch, ErrLayout, ErrVocab, ErrPadRow,
	npy.ErrFormat,
	statedict.ErrNotTorch, statedict.ErrDamaged, statedict.ErrRefused, statedict.ErrNoStateDict,
}

// isSentinel reports whether err is one of sentinels itself (not an error
// that wraps one).
func isSentinel(err error) bool {
	for _, s := range sentinels {
		if err == s {
			return true
		}
	}
	return false
}

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

// plain returns err with the text of the innermost error it wraps cut from
// the end of its message, where %w put it, when that innermost error is one
// of sentinels; an error that wraps nothing, wraps another cause (a file
// system error, whose words are the cause), or whose message does not end
// so, is returned as is.
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
	if leaf == err || !isSentinel(leaf) {
		return err
	}
	msg, suffix := err.Error(), ": "+leaf.Error()
	if !strings.HasSuffix(msg, suffix) || len(msg) == len(suffix) {
		return err
	}
	return &quietError{msg: strings.TrimSuffix(msg, suffix), err: err}
}
