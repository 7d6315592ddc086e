package figure

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"strconv"
)

// Table is the data a figure plots, for its CSV file: a header row of
// column names with their units in the name (y_um, v_um_per_s), then one
// row per plotted value. Unknown values are empty cells.
type Table struct {
	header []string
	rows   [][]string
}

// NewTable returns an empty table with the given columns.
func NewTable(columns ...string) *Table { return &Table{header: columns} }

// Row appends a row; cells are strings, ints or float64 (NaN and ±Inf are
// written empty, numbers with the digits that read back exactly). A row
// shorter than the header is padded with empty cells.
func (t *Table) Row(cells ...any) {
	if len(cells) > len(t.header) {
		panic(fmt.Sprintf("figure: table row of %d cells for %d columns", len(cells), len(t.header)))
	}
	r := make([]string, len(t.header))
	for i, c := range cells {
		switch v := c.(type) {
		case string:
			r[i] = v
		case int:
			r[i] = strconv.Itoa(v)
		case float64:
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				r[i] = strconv.FormatFloat(v, 'g', -1, 64)
			}
		default:
			panic(fmt.Sprintf("figure: table cell of type %T", c))
		}
	}
	t.rows = append(t.rows, r)
}

// Len is the number of rows below the header.
func (t *Table) Len() int { return len(t.rows) }

// CSV returns the table as CSV (RFC 4180, via encoding/csv).
func (t *Table) CSV() []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.Write(t.header)
	w.WriteAll(t.rows) // WriteAll flushes; writing to a buffer cannot fail
	return b.Bytes()
}
