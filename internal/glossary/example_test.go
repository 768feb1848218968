package glossary_test

import (
	"fmt"

	"telltale/internal/glossary"
)

func ExampleLookup() {
	t, _ := glossary.Lookup("vote margin")
	fmt.Println(t.Line())
	// Output: vote margin: how clearly the filter takes one class's side (margin = largest vote − second largest vote).
}
