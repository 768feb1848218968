// Package corpus reads labeled text, checks it, splits it, tokenizes it and
// builds the vocabulary the classifier is trained on.
package corpus
