package torchmodel_test

import (
	"fmt"

	"telltale/cnn"
	"telltale/torchmodel"
)

// The names and shapes of an exported state_dict: those of the README's
// PyTorch module (nn.Embedding, one nn.Conv1d per width, nn.Linear).
func ExampleStateDict() {
	cfg := cnn.Config{VocabSize: 1000, Dim: 50, Widths: []int{3, 4, 5}, Filters: 100, Classes: 2}
	m, err := cnn.New(cfg, nil, []string{"ham", "spam"}, 1)
	if err != nil {
		panic(err)
	}
	for _, a := range torchmodel.StateDict(m) {
		fmt.Println(a.Name, a.Shape)
	}
	// Output:
	// embedding.weight [1000 50]
	// convs.0.weight [100 50 3]
	// convs.0.bias [100]
	// convs.1.weight [100 50 4]
	// convs.1.bias [100]
	// convs.2.weight [100 50 5]
	// convs.2.bias [100]
	// output.weight [2 300]
	// output.bias [2]
}
