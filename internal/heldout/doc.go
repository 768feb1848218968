// Package heldout words the warnings about a model's held-out texts that
// the command line and the window share, so that both say the same thing
// in the same words.
package heldout
