package wording

import (
	"math"
	"testing"
)

// TestCount checks the forms against the English plural rule of the
// Unicode CLDR (Language Plural Rules, en: "one: i = 1 and v = 0", where
// the operands are taken of the absolute value, UTS #35 part 3 section
// 5.1.1): 1 and -1 take the singular, every other integer the plural.
// Grouped numbers follow CLDR's en decimal pattern "#,##0" (a comma
// every three digits from the right).
func TestCount(t *testing.T) {
	for _, c := range []struct{ got, want string }{
		{Count(1, "file", "files"), "1 file"},
		{Count(-1, "file", "files"), "-1 file"},
		{Count(0, "file", "files"), "0 files"},
		{Count(2, "match", "matches"), "2 matches"},
		{Count(-2, "match", "matches"), "-2 matches"},
		{Count(11, "sub-folder", "sub-folders"), "11 sub-folders"},
		{Count(21, "cue", "cues"), "21 cues"},
		{Count(12000, "file", "files"), "12000 files"},
		{Count(1, "word or phrase predicts", "words and phrases predict"), "1 word or phrase predicts"},
		{Count(3, "word or phrase predicts", "words and phrases predict"), "3 words and phrases predict"},
		{Texts(1), "1 text"},
		{Texts(41), "41 texts"},
		{Grouped(1, "filter", "filters"), "1 filter"},
		{Grouped(1200, "training text", "training texts"), "1,200 training texts"},
		{Grouped(-1000, "token", "tokens"), "-1,000 tokens"},
		{Thousands(0), "0"},
		{Thousands(999), "999"},
		{Thousands(1000), "1,000"},
		{Thousands(100000), "100,000"},
		{Thousands(1234567), "1,234,567"},
		{Thousands(-4500), "-4,500"},
		{Thousands(-999), "-999"},
		{Thousands(math.MinInt64), "-9,223,372,036,854,775,808"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}
