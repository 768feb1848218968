package gui

import (
	"encoding/csv"
	"io"
	"slices"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// sheet is a table of already-formatted cells with sortable columns (click
// a header) and an optional text filter. Rows keep their original index so
// a selection can be mapped back to the data behind it.
//
// Columns are as wide as their widest cell, up to a cap; a cell cut at the
// cap is shown whole in the sheet's detail line when its row is selected.
// The first column stays in place when a wide sheet scrolls sideways. New
// rows open scrolled to the top left with nothing selected.
type sheet struct {
	cols  []string
	rows  [][]string
	caps  []float32 // widest each column may grow
	texts []bool    // columns of texts (wide)

	order   []int // visible rows, as indices into rows
	sortCol int   // -1: original order
	desc    bool
	query   string

	table    *sheetTable
	detail   *widget.Label // the selected row's cut cells, whole
	onSelect func(row int) // original row index
	// onCell, if set, is called before onSelect with the column clicked.
	onCell   func(row, col int)
	selected int  // original row index, -1 none
	quiet    bool // a selection made by the program: no onCell
	mute     bool // a selection kept through a re-sort: no callbacks
	// exportCols and exportRows, when set, are what writeCSV writes
	// instead of the cells shown: numbers as numbers, an interval as its
	// value, low and high (a row of exportRows for each row of rows).
	exportCols []string
	exportRows [][]string
	// widths are the columns' widths on screen; natural are the widths
	// fitColumns gives them, before a column of texts gives up room so
	// that the titles after it fit the table (widenLast).
	widths, natural []float32
	box             *fyne.Container // the table in a layout that widens its last column
	// shownLast is the last column's width on screen.
	shownLast float32
	// cellUpdates counts the cells written on screen (each costs the
	// toolkit a text layout on the UI goroutine), for tests.
	cellUpdates int
	// held: the table shows no rows while setRows rebuilds it, so that the
	// redraw the toolkit makes on every column width set and every scroll
	// writes no cell; the rows are drawn once at the end.
	held bool
}

// Column width caps.
const (
	capDefault float32 = 240 // numbers and short words fit well within
	capText    float32 = 420 // a column of whole texts
)

// newSheet makes an empty sheet with the given column titles.
func newSheet(cols ...string) *sheet {
	s := &sheet{cols: cols, sortCol: -1, selected: -1, caps: make([]float32, len(cols)), texts: make([]bool, len(cols))}
	for i := range s.caps {
		s.caps[i] = capDefault
	}
	s.detail = widget.NewLabel("")
	s.detail.Wrapping = fyne.TextWrapWord
	s.detail.Hide()
	s.table = &sheetTable{}
	s.table.Length, s.table.CreateCell, s.table.UpdateCell = s.size, s.createCell, s.updateCell
	s.table.ExtendBaseWidget(s.table)
	s.table.ShowHeaderRow = true
	s.table.CreateHeader = func() fyne.CanvasObject {
		b := widget.NewButton("", nil)
		b.Importance = widget.LowImportance
		b.Alignment = widget.ButtonAlignLeading
		return b
	}
	s.table.UpdateHeader = s.updateHeader
	s.table.OnSelected = s.selectedCell
	if len(cols) > 4 {
		s.table.StickyColumnCount = 1
	}
	s.box = container.New(&fillLast{s: s}, s.table)
	s.fitColumns()
	return s
}

// sheetTable is a table that, on a click, runs what the row's handler left
// for after the click once the table has taken the keyboard focus. A handler
// that switches views must wait so: the table takes the focus after its
// handler returns, and a table no longer on screen cannot take it (the
// toolkit logs "Failed to focus object which is not part of the canvas'
// content").
type sheetTable struct {
	widget.Table
	clicking bool
	after    []func()
}

// Tapped selects the clicked cell, then runs what was left for after. The
// selection is cleared first: the toolkit ignores a click on the cell already
// selected, and a row that leads to another view must lead there again when
// the user comes back and clicks it once more.
func (t *sheetTable) Tapped(e *fyne.PointEvent) {
	t.clicking = true
	t.Table.UnselectAll()
	t.Table.Tapped(e)
	t.clicking = false
	after := t.after
	t.after = nil
	for _, f := range after {
		f()
	}
}

// afterClick runs f once the click being handled is done, or now when no
// click is.
func (t *sheetTable) afterClick(f func()) {
	if t.clicking {
		t.after = append(t.after, f)
		return
	}
	f()
}

// view is the sheet as it goes on screen: the table, its last column
// widened to the room left by the others.
func (s *sheet) view() fyne.CanvasObject { return s.box }

// fillLast lays out a sheet's table and gives its last column whatever
// width the other columns leave.
type fillLast struct {
	s    *sheet
	room float32 // the width last laid out
}

func (l *fillLast) Layout(objs []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objs {
		o.Move(fyne.Position{})
		o.Resize(size)
	}
	l.room = size.Width
	l.s.widenLast()
}

func (l *fillLast) MinSize(objs []fyne.CanvasObject) fyne.Size { return objs[0].MinSize() }

// widenLast gives the last column the room the others leave, never less
// than its own width. When the columns do not fit the room, a column of
// texts (wide) first gives up width, down to its title's, when that is
// enough for every title to be seen whole without scrolling sideways; a
// text cut there is shown whole in the detail line.
func (s *sheet) widenLast() {
	n := len(s.widths)
	room := s.box.Layout.(*fillLast).room
	if n == 0 || room <= 0 {
		return
	}
	s.shrinkTexts(room)
	used := sheetChrome(n)
	for _, w := range s.widths[:n-1] {
		used += w
	}
	// The last column takes the room left, down to its title's width;
	// a longer cell is cut there and shown whole in the detail line.
	w := max(room-used, titleWidth(s.cols[n-1]))
	if w != s.shownLast {
		s.shownLast = w
		s.table.SetColumnWidth(n-1, w)
	}
}

// sheetChrome is the width a table of n columns takes besides its
// columns: its scroll bar, padding and the separators between columns.
func sheetChrome(n int) float32 {
	return theme.ScrollBarSize() + 2*theme.Padding() + float32(n-1)*theme.Size(theme.SizeNameSeparatorThickness)
}

// titleWidth is the width column title t needs, with its sort mark.
func titleWidth(t string) float32 {
	return textWidth(t+" ▼", true) + 2*theme.Padding()
}

// shrinkTexts sets the widths of the columns before the last: their
// natural widths, less what the columns of texts among them give up, in
// proportion to what each can give, for every column to fit room with
// the last at its title's width.
func (s *sheet) shrinkTexts(room float32) {
	n := len(s.natural)
	need := sheetChrome(n) + titleWidth(s.cols[n-1])
	var spare float32 // what the columns of texts can give up
	for c, w := range s.natural[:n-1] {
		need += w
		if s.texts[c] {
			spare += max(0, w-titleWidth(s.cols[c]))
		}
	}
	// Only when that is enough: a table that scrolls sideways anyway keeps
	// its texts whole.
	give := max(0, need-room)
	if give > spare {
		give = 0
	}
	for c, w := range s.natural[:n-1] {
		if give > 0 && s.texts[c] {
			w -= give * max(0, w-titleWidth(s.cols[c])) / spare
		}
		if w != s.widths[c] {
			s.widths[c] = w
			s.table.SetColumnWidth(c, w)
		}
	}
}

// wide lets column c grow to w: a column of texts, which gives up width
// when the table is too narrow for its titles (shrinkTexts).
func (s *sheet) wide(c int, w float32) *sheet {
	s.caps[c] = w
	s.texts[c] = true
	s.fitColumns()
	return s
}

func (s *sheet) size() (int, int) {
	if s.held {
		return 0, len(s.cols)
	}
	return len(s.order), len(s.cols)
}

func (s *sheet) createCell() fyne.CanvasObject {
	l := widget.NewLabel("")
	l.Truncation = fyne.TextTruncateEllipsis
	return l
}

func (s *sheet) updateCell(id widget.TableCellID, o fyne.CanvasObject) {
	s.cellUpdates++
	l := o.(*widget.Label)
	if id.Row < len(s.order) && id.Col < len(s.cols) {
		// One line per cell: a text's line breaks would spill over the
		// next rows.
		l.SetText(oneLine(s.cell(s.order[id.Row], id.Col)))
	} else {
		l.SetText("")
	}
}

// cell is row r's cell in column c ("" when the row is short).
func (s *sheet) cell(r, c int) string {
	if r < len(s.rows) && c < len(s.rows[r]) {
		return s.rows[r][c]
	}
	return ""
}

func (s *sheet) updateHeader(id widget.TableCellID, o fyne.CanvasObject) {
	b := o.(*widget.Button)
	if id.Col < 0 || id.Col >= len(s.cols) {
		b.SetText("")
		return
	}
	b.SetText(s.headerText(id.Col))
	col := id.Col
	b.OnTapped = func() { s.sortBy(col) }
}

// headerText is column c's title with the sort mark.
func (s *sheet) headerText(c int) string {
	t := s.cols[c]
	if c == s.sortCol {
		if s.desc {
			return t + " ▼"
		}
		return t + " ▲"
	}
	return t
}

func (s *sheet) selectedCell(id widget.TableCellID) {
	if id.Row < 0 || id.Row >= len(s.order) {
		return
	}
	s.selected = s.order[id.Row]
	s.showDetail()
	if s.mute {
		return
	}
	if s.onCell != nil && !s.quiet {
		s.onCell(s.selected, id.Col)
	}
	if s.onSelect != nil {
		s.onSelect(s.selected)
	}
}

// textWidth is the width of s in the theme's text style, with a label's
// padding.
func textWidth(t string, bold bool) float32 {
	w := fyne.MeasureText(t, theme.TextSize(), fyne.TextStyle{Bold: bold}).Width
	return w + 2*theme.InnerPadding() + 2
}

// fitColumns sets every column's width to its widest cell or title (with
// room for the sort mark), within its cap. It measures the few longest
// cells of each column, which are the widest in the theme's font.
func (s *sheet) fitColumns() {
	s.widths = make([]float32, len(s.cols))
	s.natural = make([]float32, len(s.cols))
	for c, title := range s.cols {
		head := titleWidth(title)
		w := head
		for _, t := range s.longest(c, 3) {
			w = max(w, textWidth(t, false))
		}
		s.widths[c] = min(w, max(s.caps[c], head))
		s.natural[c] = s.widths[c]
		s.table.SetColumnWidth(c, s.widths[c])
	}
	s.shownLast = -1
	if s.box != nil {
		s.widenLast()
	}
}

// longest returns the n longest cells of column c, by rune count.
func (s *sheet) longest(c, n int) []string {
	var top []string
	for r := range s.rows {
		t := oneLine(s.cell(r, c))
		if len(top) < n {
			top = append(top, t)
		} else if k := utf8.RuneCountInString(t); k > utf8.RuneCountInString(top[n-1]) {
			top[n-1] = t
		} else {
			continue
		}
		slices.SortFunc(top, func(a, b string) int { return utf8.RuneCountInString(b) - utf8.RuneCountInString(a) })
	}
	return top
}

// cutCells lists the columns whose cell in row r does not fit the column.
func (s *sheet) cutCells(r int) []int {
	var cut []int
	for c := range s.cols {
		room := s.widths[c]
		if c == len(s.cols)-1 && s.shownLast > 0 {
			room = s.shownLast
		}
		if textWidth(oneLine(s.cell(r, c)), false) > room+1 {
			cut = append(cut, c)
		}
	}
	return cut
}

// showDetail writes the selected row's cut cells, whole, in the detail line.
func (s *sheet) showDetail() {
	if s.selected < 0 || s.selected >= len(s.rows) {
		s.detail.SetText("")
		s.detail.Hide()
		return
	}
	cut := s.cutCells(s.selected)
	if len(cut) == 0 {
		s.detail.SetText("")
		s.detail.Hide()
		return
	}
	var parts []string
	for _, c := range cut {
		parts = append(parts, s.cols[c]+": "+oneLine(s.cell(s.selected, c)))
	}
	s.detail.SetText(strings.Join(parts, "\n"))
	s.detail.Show()
}

// setRows replaces the data, keeping the sort column and filter; the
// table opens scrolled to the top left with nothing selected. Its cells are
// drawn once (held), not once for each column whose width changes.
func (s *sheet) setRows(rows [][]string) {
	s.rows = rows
	s.selected = -1
	s.held = true
	s.table.UnselectAll()
	s.reorder()
	s.fitColumns()
	s.table.ScrollToTop()
	s.table.ScrollToLeading()
	s.held = false
	s.table.Refresh()
	s.showDetail()
}

// setQuery keeps only rows with a cell containing q (case-insensitive).
func (s *sheet) setQuery(q string) {
	s.query = strings.ToLower(strings.TrimSpace(q))
	s.reorder()
	s.table.ScrollToTop()
}

// sortBy sorts by column c; a second click on the same column reverses it.
func (s *sheet) sortBy(c int) {
	if s.sortCol == c {
		s.desc = !s.desc
	} else {
		s.sortCol, s.desc = c, true
	}
	s.reorder()
}

// sortOn sorts by column c in the given direction.
func (s *sheet) sortOn(c int, desc bool) {
	s.sortCol, s.desc = c, desc
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
			x, y := s.cell(s.order[a], c), s.cell(s.order[b], c)
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
	// The selection follows its row to its new place.
	if sel := s.selected; sel >= 0 {
		s.table.UnselectAll()
		if i := slices.Index(s.order, sel); i >= 0 {
			s.mute = true
			s.quietSelect(i)
			s.mute = false
		} else {
			s.selected = -1
			s.showDetail()
		}
	}
	s.table.Refresh()
}

// visible returns the original index of the row shown at position i.
func (s *sheet) visible(i int) int { return s.order[i] }

// selectRow selects the row with original index row, if visible, as a
// click on it would (onSelect runs, onCell does not).
func (s *sheet) selectRow(row int) {
	if i := slices.Index(s.order, row); i >= 0 {
		s.quietSelect(i)
	}
}

// quietSelect selects the row shown at position i without onCell. A table
// not yet laid out (a hidden tab) would scroll the first row under its
// header, so the first row is shown from the top left.
func (s *sheet) quietSelect(i int) {
	// With a cell action, select a cell beside the first column so that a
	// click on the first column still reaches it.
	col := 0
	if s.onCell != nil && len(s.cols) > 1 {
		col = 1
	}
	s.quiet = true
	s.table.Select(widget.TableCellID{Row: i, Col: col})
	s.quiet = false
	if i == 0 || s.table.Size().Height == 0 {
		s.table.ScrollToTop()
		s.table.ScrollToLeading()
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
	cols, rows := s.cols, s.rows
	if s.exportCols != nil && len(s.exportRows) == len(s.rows) {
		cols, rows = s.exportCols, s.exportRows
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(cols); err != nil {
		return err
	}
	for _, i := range s.order {
		if err := cw.Write(rows[i]); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
