package main

import "testing"

// TestWords: counts agree with their nouns, and a probability that moves
// up is said to rise, never to fall by a negative amount. (Common
// practice, no source: English number agreement.)
func TestWords(t *testing.T) {
	cases := []struct{ got, want string }{
		{change(0.029), "falls by 0.029"},
		{change(-0.029), "rises by 0.029"},
		{change(-0.00012), "rises by 0.00012"},
		{change(0.0004999), "falls by 0.0005"},
		{change(0.0005), "falls by 0.001"},
		{change(3e-7), "falls by 3e-07"},
		{change(0), "does not change"},
	}
	for _, c := range cases {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}
