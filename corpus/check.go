package corpus

import (
	"errors"
	"os"
)

// errFirstExample stops Check's read at the first example.
var errFirstExample = errors.New("corpus: first example read")

// Check reports, before a command's work, the mistakes in how the corpus
// at path is to be read that its start shows: a format its name does not
// tell (and opt.Format does not give), a header or first line the format
// cannot read, a text or label column it lacks, and no example at all (a
// file with a header alone). It reads up to the first example, as Load
// would, and returns Load's own error for these (wrapping ErrFormat,
// ErrColumn or ErrEmpty); any other problem, such as a bad record, is left
// to the read itself, and nil is returned. A named pipe is not read (it
// can be read only once): nil.
func Check(path string, opt Options) error {
	if st, err := os.Stat(path); err == nil && st.Mode()&os.ModeNamedPipe != 0 {
		return nil
	}
	_, err := Stream(path, opt, func(Example) error { return errFirstExample })
	var ke *kindedError
	switch {
	case err == nil, errors.Is(err, errFirstExample):
		return nil
	case errors.Is(err, ErrColumn), errors.Is(err, ErrEmpty):
		return err
	case errors.Is(err, ErrFormat) && errors.As(err, &ke) && ke.line <= 1:
		return err
	}
	return nil
}
