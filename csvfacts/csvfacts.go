package csvfacts

import (
	"encoding/json"
	"strings"
)

// Facts are what a CSV file says about itself, in columns after the data columns so that the
// first line stays the header row every CSV reader expects (GDAL's CSV driver, Python's
// csv.DictReader and spreadsheets take a leading comment line for the header):
//
//   - dataset, model: on every row (short; they survive concatenating files);
//   - data_label: "SYNTHETIC" on every row when the answer is built from at least one
//     invented grid (only present then);
//   - caution, provenance: on the first data row only (the navigation caution and the
//     provenance as JSON), empty on the others.
//
// Empty facts get no column. A file with no data row gets one row holding only these facts,
// so no file loses them.
type Facts struct {
	Dataset    string
	Model      string
	Label      string
	Caution    string
	Provenance any // encoded as JSON; nil: no provenance column
}

// Column is one fact column: its header, its value, and whether only the first data row
// carries the value (the others leave the cell empty).
type Column struct {
	Name         string
	Value        string
	FirstRowOnly bool
}

// Columns returns the fact columns of f in their fixed order (dataset, model, data_label,
// caution, provenance), leaving out empty facts.
func (f Facts) Columns() ([]Column, error) {
	var cs []Column
	if f.Dataset != "" {
		cs = append(cs, Column{"dataset", f.Dataset, false})
	}
	if f.Model != "" {
		cs = append(cs, Column{"model", f.Model, false})
	}
	if f.Label != "" {
		cs = append(cs, Column{"data_label", f.Label, false})
	}
	if f.Caution != "" {
		cs = append(cs, Column{"caution", f.Caution, true})
	}
	if f.Provenance != nil {
		var b strings.Builder
		enc := json.NewEncoder(&b)
		enc.SetEscapeHTML(false)
		if err := enc.Encode(f.Provenance); err != nil {
			return nil, err
		}
		cs = append(cs, Column{"provenance", strings.TrimSuffix(b.String(), "\n"), true})
	}
	return cs, nil
}

// Cell is the value of fact column c on data row i (0-based).
func (c Column) Cell(i int) string {
	if c.FirstRowOnly && i > 0 {
		return ""
	}
	return c.Value
}
