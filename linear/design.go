package linear

import (
	"hash/maphash"
	"math"
	"slices"
)

// design is the training rows laid out for the objective's two passes:
// by text (the logits of each text) and by column (the gradient of each
// weight), over the columns of the fit space.
//
// The fit space merges features whose training columns are identical (the
// same texts with the same values: in practice the n-grams that occur in
// one training text only, as many of them as it has). The objective is
// unchanged by replacing the weights of m identical columns by their mean,
// except that the penalty drops unless they were equal, so they are equal
// at its minimiser; m such weights w are one weight w' = √m·w on the
// column √m·x, which gives the same logits and the same penalty (m·w² =
// w'²). The fit space thus has the same minimiser, mapped back by
// w = w'/√m, at a fraction of the size.
//
// Columns are numbered in the order in which the rows first use them, so
// that one text's columns, and the frequent ones, lie close together in
// the weight vector.
type design struct {
	n, p int // texts; fit-space columns
	// col[j] is the fit-space column of Vectorizer feature j, scale[c] the
	// factor 1/√m of column c's m features.
	col   []int32
	scale []float64
	// Rows: the columns and values of text i are rowCol, rowVal
	// [rowPtr[i]:rowPtr[i+1]].
	rowPtr []int
	rowCol []int32
	rowVal []float64
	// Columns: the texts and values of column c are colRow, colVal
	// [colPtr[c]:colPtr[c+1]], texts in increasing order.
	colPtr []int
	colRow []int32
	colVal []float64
}

// newDesign lays out the rows X over features (every index below features).
func newDesign(X []Row, features int) *design {
	order, cols := byColumn(X, features)
	d := &design{n: len(X), col: make([]int32, features)}
	// Merge identical columns, keeping the order of first use.
	var seed = maphash.MakeSeed()
	firstOf := map[uint64][]int32{} // hash → fit-space columns
	var reps []int32                // column c's first feature, in order
	var sizes []int
	for _, j := range order {
		h := cols.hash(seed, j)
		c := int32(-1)
		for _, cand := range firstOf[h] {
			if cols.equal(reps[cand], j) {
				c = cand
				break
			}
		}
		if c < 0 {
			c = int32(len(reps))
			firstOf[h] = append(firstOf[h], c)
			reps = append(reps, j)
			sizes = append(sizes, 0)
		}
		d.col[j] = c
		sizes[c]++
	}
	d.p = len(reps)
	d.scale = make([]float64, d.p)
	d.colPtr = make([]int, d.p+1)
	for c, j := range reps {
		d.scale[c] = 1 / math.Sqrt(float64(sizes[c]))
		d.colPtr[c+1] = d.colPtr[c] + cols.len(j)
	}
	nnz := d.colPtr[d.p]
	d.colRow, d.colVal = make([]int32, 0, nnz), make([]float64, 0, nnz)
	d.rowPtr = make([]int, d.n+1)
	for c, j := range reps {
		root := math.Sqrt(float64(sizes[c]))
		rows, vals := cols.column(j)
		d.colRow = append(d.colRow, rows...)
		for t, v := range vals {
			d.colVal = append(d.colVal, v*root)
			d.rowPtr[rows[t]+1]++
		}
	}
	for i := range d.n {
		d.rowPtr[i+1] += d.rowPtr[i]
	}
	d.rowCol, d.rowVal = make([]int32, nnz), make([]float64, nnz)
	next := slices.Clone(d.rowPtr[:d.n])
	for c := range d.p {
		for t := d.colPtr[c]; t < d.colPtr[c+1]; t++ {
			i := d.colRow[t]
			d.rowCol[next[i]], d.rowVal[next[i]] = int32(c), d.colVal[t]
			next[i]++
		}
	}
	return d
}

// columns is the rows X by feature: feature j's texts and values are
// row, val[ptr[j]:ptr[j+1]], texts in increasing order.
type columns struct {
	ptr []int
	row []int32
	val []float64
}

// byColumn transposes X (rows over features) and returns the features in
// the order in which the rows first use them (those no row uses last).
func byColumn(X []Row, features int) ([]int32, *columns) {
	cols := &columns{ptr: make([]int, features+1)}
	order := make([]int32, 0, features)
	used := make([]bool, features)
	for _, r := range X {
		for _, j := range r.Index {
			cols.ptr[j+1]++
			if !used[j] {
				used[j] = true
				order = append(order, j)
			}
		}
	}
	for j, u := range used {
		if !u {
			order = append(order, int32(j))
		}
	}
	for j := range features {
		cols.ptr[j+1] += cols.ptr[j]
	}
	nnz := cols.ptr[features]
	cols.row, cols.val = make([]int32, nnz), make([]float64, nnz)
	next := slices.Clone(cols.ptr[:features])
	for i, r := range X {
		for t, j := range r.Index {
			cols.row[next[j]], cols.val[next[j]] = int32(i), r.Value[t]
			next[j]++
		}
	}
	return order, cols
}

func (c *columns) column(j int32) ([]int32, []float64) {
	return c.row[c.ptr[j]:c.ptr[j+1]], c.val[c.ptr[j]:c.ptr[j+1]]
}

func (c *columns) len(j int32) int { return c.ptr[j+1] - c.ptr[j] }

func (c *columns) hash(seed maphash.Seed, j int32) uint64 {
	var h maphash.Hash
	h.SetSeed(seed)
	rows, vals := c.column(j)
	var b [12]byte
	for t, i := range rows {
		u := math.Float64bits(vals[t])
		for k := range 4 {
			b[k] = byte(i >> (8 * k))
		}
		for k := range 8 {
			b[4+k] = byte(u >> (8 * k))
		}
		h.Write(b[:])
	}
	return h.Sum64()
}

// equal says whether features a and b have the same texts and values.
func (c *columns) equal(a, b int32) bool {
	ra, va := c.column(a)
	rb, vb := c.column(b)
	return slices.Equal(ra, rb) && slices.Equal(va, vb)
}
