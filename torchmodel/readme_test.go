package torchmodel

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"telltale/internal/testref"
)

// The PyTorch module in the README's "Bring your own model" is, line for
// line, testdata/telltale_cnn.py, the one TestExportMatchesTorch runs.
func TestReadmeHoldsTheTestedModule(t *testing.T) {
	readme, err := os.ReadFile(filepath.Join(testref.Root(), "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	module, err := os.ReadFile("testdata/telltale_cnn.py")
	if err != nil {
		t.Fatal(err)
	}
	_, section, ok := strings.Cut(string(readme), "## Bring your own model")
	if !ok {
		t.Fatal(`README.md has no section "Bring your own model"`)
	}
	if !strings.Contains(section, "```python\n"+string(module)+"```\n") {
		t.Error("README.md's module differs from testdata/telltale_cnn.py: copy the tested file into the README")
	}
}
