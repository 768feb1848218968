// Package inorder is the ordered worker pool of the commands that handle
// many texts one at a time (explain): the work runs on several goroutines,
// the output comes in the input's order, and errors and cancellation
// behave as a plain loop's would.
package inorder
