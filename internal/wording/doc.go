// Package wording writes counts with their nouns ("1 text", "3 texts",
// "1,200 training texts") for the command line, the window, the report,
// the audit's story and the data readers, so that every place that counts
// something says it the same way.
package wording
