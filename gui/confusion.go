package gui

import (
	"fmt"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
)

// confusionGrid draws a confusion matrix as a grid of counts, each cell
// toned by its share of the row's texts, with the selected cell framed.
// Row and column heads carry the whole label names.
type confusionGrid struct {
	box     *fyne.Container
	cells   [][]*heatCell // [gold][pred]
	clicked func(gold, pred int)
}

func newConfusionGrid(clicked func(gold, pred int)) *confusionGrid {
	return &confusionGrid{box: container.NewGridWithColumns(1), clicked: clicked}
}

// set draws m's matrix.
func (c *confusionGrid) set(m cnn.Metrics) {
	n := len(m.Labels)
	grid := container.NewGridWithColumns(n + 1)
	grid.Add(widget.NewLabel(""))
	for _, l := range m.Labels {
		grid.Add(widget.NewLabelWithStyle(l, fyne.TextAlignCenter, fyne.TextStyle{Bold: true}))
	}
	c.cells = make([][]*heatCell, n)
	for g := range n {
		grid.Add(widget.NewLabelWithStyle(m.Labels[g], fyne.TextAlignTrailing, fyne.TextStyle{Bold: true}))
		rowSum := 0
		for _, k := range m.Confusion[g] {
			rowSum += k
		}
		for p := range n {
			k := m.Confusion[g][p]
			share := 0.0
			if rowSum > 0 {
				share = float64(k) / float64(rowSum)
			}
			cell := newHeatCell(fmt.Sprint(k), countColor(share, 1), func() { c.clicked(g, p) })
			cell.value = float64(k)
			c.cells[g] = append(c.cells[g], cell)
			grid.Add(cell)
		}
	}
	c.box.Objects = []fyne.CanvasObject{grid}
	c.box.Refresh()
}

// selectCell frames cell (gold, pred) and no other.
func (c *confusionGrid) selectCell(gold, pred int) {
	for g, row := range c.cells {
		for p, cell := range row {
			cell.setSelected(g == gold && p == pred)
		}
	}
}

// selected returns the framed cell, or -1, -1.
func (c *confusionGrid) selected() (gold, pred int) {
	for g, row := range c.cells {
		for p, cell := range row {
			if cell.selected {
				return g, p
			}
		}
	}
	return -1, -1
}
