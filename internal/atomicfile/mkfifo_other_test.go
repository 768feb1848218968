//go:build !unix

package atomicfile

import "errors"

func syscallMkfifo(string) error { return errors.New("named pipes are a Unix feature") }
