package gui

import (
	"encoding/csv"
	"io"
	"sort"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/widget"
)

// sheet is a table of already-formatted cells with sortable columns (tap a
// header) and an optional text filter. Rows keep their original index so a
// selection can be mapped back to the data behind it.
type sheet struct {
	cols   []string
	rows   [][]string
	widths []float32

	order   []int // visible rows, as indices into rows
	sortCol int   // -1: original order
	desc    bool
	query   string

	table    *widget.Table
	onSelect func(row int) // original row index
	// onCell, if set, is called before onSelect with the column tapped.
	onCell   func(row, col int)
	selected int  // original row index, -1 none
	quiet    bool // a selection made by the program: no onCell
}

// newSheet makes an empty sheet with the given column titles and widths.
func newSheet(cols []string, widths []float32) *sheet {
	s := &sheet{cols: cols, widths: widths, sortCol: -1, selected: -1}
	s.table = widget.NewTable(
		func() (int, int) { return len(s.order), len(s.cols) },
		func() fyne.CanvasObject { return widget.NewLabel("") },
		func(id widget.TableCellID, o fyne.CanvasObject) {
			l := o.(*widget.Label)
			l.Truncation = fyne.TextTruncateEllipsis
			if id.Row < len(s.order) && id.Col < len(s.cols) {
				// One line per cell: a text's line breaks would spill
				// over the next rows.
				l.SetText(strings.ReplaceAll(s.rows[s.order[id.Row]][id.Col], "\n", " "))
			} else {
				l.SetText("")
			}
		})
	s.table.ShowHeaderRow = true
	s.table.CreateHeader = func() fyne.CanvasObject {
		b := widget.NewButton("", nil)
		b.Importance = widget.LowImportance
		return b
	}
	s.table.UpdateHeader = func(id widget.TableCellID, o fyne.CanvasObject) {
		b := o.(*widget.Button)
		if id.Col < 0 || id.Col >= len(s.cols) {
			b.SetText("")
			return
		}
		t := s.cols[id.Col]
		if id.Col == s.sortCol {
			if s.desc {
				t += " ▼"
			} else {
				t += " ▲"
			}
		}
		b.SetText(t)
		col := id.Col
		b.OnTapped = func() { s.sortBy(col) }
	}
	s.table.OnSelected = func(id widget.TableCellID) {
		if id.Row < 0 || id.Row >= len(s.order) {
			return
		}
		s.selected = s.order[id.Row]
		if s.onCell != nil && !s.quiet {
			s.onCell(s.selected, id.Col)
		}
		if s.onSelect != nil {
			s.onSelect(s.selected)
		}
	}
	for i, w := range widths {
		s.table.SetColumnWidth(i, w)
	}
	return s
}

// setRows replaces the data, keeping the sort column and filter.
func (s *sheet) setRows(rows [][]string) {
	s.rows = rows
	s.selected = -1
	s.table.UnselectAll()
	s.reorder()
}

// setQuery keeps only rows with a cell containing q (case-insensitive).
func (s *sheet) setQuery(q string) {
	s.query = strings.ToLower(strings.TrimSpace(q))
	s.reorder()
}

// sortBy sorts by column c; a second tap on the same column reverses it.
func (s *sheet) sortBy(c int) {
	if s.sortCol == c {
		s.desc = !s.desc
	} else {
		s.sortCol, s.desc = c, true
	}
	s.reorder()
}

func (s *sheet) reorder() {
	s.order = s.order[:0]
	for i, r := range s.rows {
		if s.query == "" || rowMatches(r, s.query) {
			s.order = append(s.order, i)
		}
	}
	if c := s.sortCol; c >= 0 {
		sort.SliceStable(s.order, func(a, b int) bool {
			x, y := s.rows[s.order[a]][c], s.rows[s.order[b]][c]
			// Cells that are not numbers ("—": no value) stay after the
			// numbers in both directions.
			_, ex := parseCell(x)
			_, ey := parseCell(y)
			if (ex == nil) != (ey == nil) {
				return ex == nil
			}
			if s.desc {
				return cellLess(y, x)
			}
			return cellLess(x, y)
		})
	}
	s.table.Refresh()
}

// visible returns the original index of the row shown at position i.
func (s *sheet) visible(i int) int { return s.order[i] }

// selectRow selects the row with original index row, if visible.
func (s *sheet) selectRow(row int) {
	for i, r := range s.order {
		if r == row {
			// With a cell action, select a cell beside the first column
			// so that a tap on the first column still reaches it.
			col := 0
			if s.onCell != nil && len(s.cols) > 1 {
				col = 1
			}
			s.quiet = true
			s.table.Select(widget.TableCellID{Row: i, Col: col})
			s.quiet = false
			return
		}
	}
}

func rowMatches(r []string, q string) bool {
	for _, c := range r {
		if strings.Contains(strings.ToLower(c), q) {
			return true
		}
	}
	return false
}

// cellLess orders numbers numerically (a leading sign, a trailing % allowed)
// and everything else as text; numbers sort before text.
func cellLess(x, y string) bool {
	fx, ex := parseCell(x)
	fy, ey := parseCell(y)
	switch {
	case ex == nil && ey == nil:
		return fx < fy
	case ex == nil:
		return true
	case ey == nil:
		return false
	}
	return x < y
}

func parseCell(s string) (float64, error) {
	return strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(s), "%"), 64)
}

// writeCSV writes the header and every row (all rows, in the shown order).
func (s *sheet) writeCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(s.cols); err != nil {
		return err
	}
	for _, i := range s.order {
		if err := cw.Write(s.rows[i]); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
