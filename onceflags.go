package main

import (
	"flag"
	"strconv"
	"strings"
)

// repeatable marks an option whose value collects every use (audit's
// --mark-artifact, --mark-task and --unmark). Any other option given
// more than once is refused: the flag package would silently keep the
// last value, and "--epochs 5 ... --epochs 50" is more often a slip than
// a choice.
type repeatable interface{ repeatable() }

func (*cueList) repeatable() {}

// usesOf records the values an option was given, in order.
type usesOf struct {
	flag.Value
	name   string
	values []string
}

func (u *usesOf) Set(s string) error {
	u.values = append(u.values, s)
	return u.Value.Set(s)
}

// usesOfBool keeps a switch a switch (--quiet without a value).
type usesOfBool struct{ *usesOf }

func (usesOfBool) IsBoolFlag() bool { return true }

// countUses makes fs record each use of its options that are not
// repeatable. Call it after the options are registered and before
// fs.Parse; the function it returns names the first option given more
// than once, or returns nil.
func countUses(fs *flag.FlagSet) func() error {
	var counted []*usesOf
	fs.VisitAll(func(f *flag.Flag) {
		if _, ok := f.Value.(repeatable); ok {
			return
		}
		u := &usesOf{Value: f.Value, name: f.Name}
		counted = append(counted, u)
		if b, ok := f.Value.(interface{ IsBoolFlag() bool }); ok && b.IsBoolFlag() {
			f.Value = usesOfBool{u}
			return
		}
		f.Value = u
	})
	return func() error {
		for _, u := range counted {
			if len(u.values) > 1 {
				quoted := make([]string, len(u.values))
				for i, v := range u.values {
					quoted[i] = strconv.Quote(clip(v))
				}
				return usagef("--%s is given %d times (%s): give it once", u.name, len(u.values), strings.Join(quoted, ", then "))
			}
		}
		return nil
	}
}
