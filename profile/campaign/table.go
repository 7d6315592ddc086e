package campaign

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"

	"gaptrace/profile/summary"
)

// Fixed columns of the campaign table, around the manifest's free columns
// (which come right after ColName).
const (
	ColPhase     = "phase"      // number of the shear phase, from 1
	ColStatus    = "status"     // "ok", or why the row has no numbers
	ColWarnings  = "n_warnings" // number of warnings in summary.json
	colWindowLo  = "window_start_s"
	colWindowHi  = "window_end_s"
	colNBands    = "n_bands"
	colASVerdict = "after_stop_verdict"
	colASMode    = "after_stop_mode"
)

// phaseColumns are the shear phase's numbers, named as in summary.json's
// shear_phases[i]. A name the summary does not hold (fields of a newer or
// older version) gives an empty cell.
var phaseColumns = []string{
	"start_s", "end_s", colWindowLo, colWindowHi,
	"nominal_rate_per_s", "wall_speed_um_per_s", "wall_stress_pa", "wall_stress_err_pa",
	"bulk_rate_per_s", "bulk_rate_err_per_s",
	"slip_stationary_um_per_s", "slip_stationary_err_um_per_s",
	"slip_moving_um_per_s", "slip_moving_err_um_per_s",
	"slip_length_stationary_um", "slip_length_stationary_err_um",
	"slip_length_moving_um", "slip_length_moving_err_um",
	"slip_fraction", "slip_fraction_err",
	"wall_slip", "banded", colNBands, "verdict",
	"inhomogeneity_onset_s", "inhomogeneity_onset_err_s", "inhomogeneity_onset_strain", "inhomogeneity_first",
}

// afterStopColumns are summary.json's after_stop fields, named as there
// except the verdict and mode, which get an after_stop_ prefix to differ
// from the shear phase's. They are filled on the row of the last shear
// phase, the one whose cessation they describe, and empty on the others
// (unknown: the time after an earlier phase is not analysed).
var afterStopColumns = []string{
	colASVerdict, colASMode, "plane_um", "plane_err_um",
	"onset_after_stop_s", "onset_after_stop_err_s",
	"recovered_strain", "recovered_strain_err",
	"noise_floor_um", "max_displacement_um",
}

// afterStopJSON maps a column to its summary.json name where they differ.
var afterStopJSON = map[string]string{colASVerdict: "verdict", colASMode: "mode"}

// TableColumn reports whether name is one of the table's own columns,
// which a free column of the manifest may not take.
func TableColumn(name string) bool {
	if name == ColName || name == ColPhase || name == ColStatus || name == ColWarnings {
		return true
	}
	for _, cs := range [][]string{phaseColumns, afterStopColumns} {
		for _, c := range cs {
			if c == name {
				return true
			}
		}
	}
	return false
}

// Table is the campaign table: one record per shear phase of every row of
// the manifest (one record without a phase for a row that has no numbers
// or no shear phase). Empty cells are unknown values.
type Table struct {
	Columns []string
	Records [][]string
	// Free are the manifest's free columns (Columns[1 : 1+len(Free)]).
	Free []string
	// GapUM is the gap of each record's analysis, um (NaN when unknown),
	// by which the page groups its series; not a column, since the
	// manifest may have a gap_um column of its own.
	GapUM []float64
	// Statuses holds each manifest row's status, in the manifest's order.
	Statuses []Status
}

// Collect builds the campaign table from the row folders under l, in the
// manifest's order.
func Collect(m *Manifest, l Layout) *Table {
	t := &Table{Free: m.Free}
	t.Columns = append(append([]string{ColName}, m.Free...), ColPhase, ColStatus)
	t.Columns = append(append(append(t.Columns, phaseColumns...), afterStopColumns...), ColWarnings)
	for i := range m.Rows {
		r := &m.Rows[i]
		st := l.StatusOf(r.Name)
		var s *summary.Summary
		if st.State == Complete {
			var err error
			if s, err = summary.Read(filepath.Join(l.RowDir(r.Name), SummaryFile)); err != nil {
				st = Status{State: Failed, Reason: fmt.Sprintf("unreadable %s: %v", SummaryFile, err)}
			}
		}
		t.Statuses = append(t.Statuses, st)
		t.addRow(r, st, s)
	}
	return t
}

// addRow appends the records of one manifest row.
func (t *Table) addRow(r *Row, st Status, s *summary.Summary) {
	lead := append([]string{r.Name}, r.Free...)
	width := len(t.Columns)
	if s == nil {
		rec := make([]string, width)
		copy(rec, lead)
		rec[len(lead)+1] = st.String()
		t.Records = append(t.Records, rec)
		t.GapUM = append(t.GapUM, math.NaN())
		return
	}
	gap := math.NaN()
	if s.Calibration != nil {
		gap = s.Calibration.GapUM
	}
	after := fields(s.AfterStop)
	n := max(len(s.ShearPhases), 1)
	for i := 0; i < n; i++ {
		rec := make([]string, 0, width)
		rec = append(rec, lead...)
		var ph map[string]json.RawMessage
		if i < len(s.ShearPhases) {
			sp := &s.ShearPhases[i]
			ph = fields(sp)
			ph[colWindowLo], _ = json.Marshal(summary.Num(sp.WindowS[0]))
			ph[colWindowHi], _ = json.Marshal(summary.Num(sp.WindowS[1]))
			if len(sp.Bands) > 0 { // no band at all: the fit failed, unknown
				ph[colNBands] = json.RawMessage(strconv.Itoa(len(sp.Bands)))
			}
			rec = append(rec, strconv.Itoa(i+1))
		} else {
			rec = append(rec, "")
		}
		rec = append(rec, st.String())
		for _, c := range phaseColumns {
			rec = append(rec, cell(ph[c]))
		}
		last := i == n-1
		for _, c := range afterStopColumns {
			v := json.RawMessage(nil)
			if last {
				name := c
				if j, ok := afterStopJSON[c]; ok {
					name = j
				}
				v = after[name]
			}
			rec = append(rec, cell(v))
		}
		rec = append(rec, strconv.Itoa(len(s.Warnings)))
		t.Records = append(t.Records, rec)
		t.GapUM = append(t.GapUM, gap)
	}
}

// fields are the JSON fields of v by name (nil for a nil pointer): the
// summary's own names, through its own types.
func fields(v any) map[string]json.RawMessage {
	b, err := json.Marshal(v)
	if err != nil {
		return nil
	}
	var m map[string]json.RawMessage
	if json.Unmarshal(b, &m) != nil { // null: nothing
		return nil
	}
	return m
}

// cell is the table's text of a JSON value: numbers as summary.json writes
// them, strings unquoted, booleans as true/false, null and absent empty;
// lists and objects have no cell.
func cell(v json.RawMessage) string {
	v = bytes.TrimSpace(v)
	if len(v) == 0 || string(v) == "null" {
		return ""
	}
	switch v[0] {
	case '"':
		var s string
		if json.Unmarshal(v, &s) == nil {
			return s
		}
		return ""
	case '[', '{':
		return ""
	}
	return string(v)
}

// Column is the index of the named column, or -1.
func (t *Table) Column(name string) int {
	for i, c := range t.Columns {
		if c == name {
			return i
		}
	}
	return -1
}

// Float is record i's value in the named column, NaN when empty, absent
// or not a number.
func (t *Table) Float(i int, name string) float64 {
	j := t.Column(name)
	if j < 0 || t.Records[i][j] == "" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(t.Records[i][j], 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

// WriteCSV writes the table as CSV with a header.
func (t *Table) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(t.Columns); err != nil {
		return err
	}
	if err := cw.WriteAll(t.Records); err != nil {
		return err
	}
	return cw.Error()
}

// Counts are the numbers of manifest rows in each state.
func (t *Table) Counts() (ok, failed, incomplete, notRun int) {
	for _, s := range t.Statuses {
		switch s.State {
		case Complete:
			ok++
		case Failed:
			failed++
		case Incomplete:
			incomplete++
		default:
			notRun++
		}
	}
	return
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
