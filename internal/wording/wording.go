package wording

import "strconv"

// Noun is the form of a noun that goes with the count n: one when n is 1
// or -1, many otherwise (0 texts, 2 texts, -3 texts). The sign does not
// change the form, as in the English plural rule of the Unicode CLDR,
// which looks at the absolute value. Many is the plural form, spelt out
// by the caller because not every noun adds an s ("match", "matches";
// "word or phrase predicts", "words and phrases predict").
func Noun(n int, one, many string) string {
	if n == 1 || n == -1 {
		return one
	}
	return many
}

// Count is n in plain digits with the noun in the form that goes with it:
// Count(1, "file", "files") is "1 file", Count(12000, "file", "files")
// is "12000 files". See Noun for the form.
func Count(n int, one, many string) string {
	return strconv.Itoa(n) + " " + Noun(n, one, many)
}

// Grouped is Count with the digits grouped by thousands ("1,200 training
// texts"), for prose where large counts are read rather than copied (the
// HTML report). See Thousands for the grouping.
func Grouped(n int, one, many string) string {
	return Thousands(n) + " " + Noun(n, one, many)
}

// Texts is Count(n, "text", "texts"), the count said most often.
func Texts(n int) string { return Count(n, "text", "texts") }

// Thousands writes n with a comma between groups of three digits:
// "999", "1,000", "-4,500".
func Thousands(n int) string {
	s := strconv.Itoa(n)
	neg := n < 0
	if neg {
		s = s[1:]
	}
	out := make([]byte, 0, len(s)+len(s)/3+1)
	if neg {
		out = append(out, '-')
	}
	for i := range len(s) {
		if i > 0 && (len(s)-i)%3 == 0 {
			out = append(out, ',')
		}
		out = append(out, s[i])
	}
	return string(out)
}
