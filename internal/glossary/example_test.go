package glossary_test

import (
	"fmt"

	"telltale/internal/glossary"
)

func ExampleLookup() {
	t, _ := glossary.Lookup("vote margin")
	fmt.Println(t.Line())
	// Output: vote margin: how far the filter's highest winning window raises its class's logit above the next class's, in log-odds (margin = (largest output weight − second largest output weight) × the filter's highest winning activation).
}
