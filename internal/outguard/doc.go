// Package outguard keeps a program's outputs off its inputs. Before any
// work starts, Check compares every file a run will write with every file
// it reads, by file identity rather than by spelling: the same path
// written another way (./x/../d.csv), a symbolic link to an input, a hard
// link to it, or a file inside an input folder are all the input. It also
// finds outputs that cannot be written (a folder, a missing or read-only
// folder) and two outputs that name one file. CheckInput finds, as early,
// an input that cannot be read: missing, a folder where a file is
// expected, or not readable.
//
// The command line and the window use it for every file they write, so
// that no run ever replaces the data it was given.
package outguard
