// Package inputfile opens the files a command reads so that the wait for a
// named pipe's writer gives way when the command is interrupted.
//
// Opening a named pipe (mkfifo, or a shell's process substitution) for
// reading blocks in open(2) until a writer opens it, and a caught signal
// does not end that wait: the signal handler runs, the open is restarted,
// and a pipe that never gets a writer holds the command for ever. Open and
// ReadFile open a named pipe on a goroutine of their own and stop waiting
// when Interrupt is called (the command line calls it on SIGINT and
// SIGTERM); other files are opened directly. A writer that comes later
// still reaches a command that was not interrupted, whole: the pipe is
// opened once, by the reader that reads it. ReadFileContext also gives way
// when its context is done, while it waits for the writer or for more from
// it (the window's Stop, which must not end later reads as Interrupt does).
package inputfile
