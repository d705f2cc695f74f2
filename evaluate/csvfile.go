package evaluate

import (
	"cmp"
	"encoding/csv"
	"io"
	"math"
	"ridgeflank/csvfacts"
	"strings"
)

// CSVColumn is one column of a CSV answer: numbers (Values, formatted by Format; non-finite
// values are empty fields) or, when Text is not nil, text. Name carries the unit (FieldName).
type CSVColumn struct {
	Name   string
	Values []float64
	Format func(float64) string // nil: FormatNumber, the API's one number rule
	Text   []string
}

// CSVFacts are what a CSV file says about itself: csvfacts.Facts (the one rule, shared with
// the survey plan's CSV).
type CSVFacts = csvfacts.Facts

// FactsOf are the CSV facts of an answer with provenance p.
func FactsOf(p Provenance) CSVFacts {
	f := CSVFacts{Dataset: p.Dataset, Label: p.Label, Caution: p.Caution, Provenance: p}
	if p.Model != nil {
		f.Model = p.Model.ID
	}
	return f
}

// WriteCSV writes cols (all of one length) and facts as RFC 4180 CSV: the header row first,
// then one row per value. It is the one CSV writer of every answer (HTTP and command line).
func WriteCSV(w io.Writer, cols []CSVColumn, facts CSVFacts) error {
	header := make([]string, 0, len(cols)+5)
	for _, c := range cols {
		header = append(header, c.Name)
	}
	n := 0
	if len(cols) > 0 {
		n = max(len(cols[0].Values), len(cols[0].Text))
	}
	fs, err := facts.Columns()
	if err != nil {
		return err
	}
	for _, f := range fs {
		header = append(header, f.Name)
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(header); err != nil {
		return err
	}
	row := make([]string, len(header))
	rows := n
	if rows == 0 && len(fs) > 0 {
		rows = 1
	}
	for i := 0; i < rows; i++ {
		for j, c := range cols {
			row[j] = ""
			switch {
			case i >= n:
			case c.Text != nil:
				row[j] = c.Text[i]
			default:
				row[j] = formatCSV(c.Values[i], c.Format)
			}
		}
		for k, f := range fs {
			row[len(cols)+k] = f.Cell(i)
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func formatCSV(v float64, format func(float64) string) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	if format != nil {
		return format(v)
	}
	return FormatNumber(v)
}

// FieldName is the name of parameter p's field in every format that names fields (CSV columns,
// GeoJSON properties): its id and its unit, e.g. "observed_depth_m", "heat_flow_mw_m2".
func FieldName(p Parameter) string { return p.ID + "_" + UnitSuffix(p.Unit) }

// FileName is the download name of an answer: dataset, kind of question, parameters and model
// (when the answer depends on it), e.g. "quillon-basin-synthetic-area-residual_depth-gdh1.csv".
func FileName(q *Query, kind, ext string) string {
	model := ""
	if q.Predicts() && q.Model != nil {
		model = q.Model.Params().ID
	}
	ids := make([]string, len(q.Params))
	for i, p := range q.Params {
		ids[i] = p.ID
	}
	return fileName(q.Dataset.Row.ID, kind, ids, model, ext)
}

// ExportFileName is FileName for a question not yet resolved (an export queued as a job): the
// model is o.Model (DefaultModel when empty) when a parameter of o depends on it.
func ExportFileName(dataset, kind string, o Options, ext string) string {
	model := ""
	for _, id := range o.Parameters {
		if p, ok := ParameterByID(id); ok && p.Predicted {
			model = cmp.Or(o.Model, DefaultModel)
		}
	}
	return fileName(dataset, kind, o.Parameters, model, ext)
}

func fileName(dataset, kind string, params []string, model, ext string) string {
	parts := []string{dataset, kind}
	if len(params) > 0 {
		parts = append(parts, strings.Join(params, "+"))
	}
	if model != "" {
		parts = append(parts, model)
	}
	return SafeFileName(strings.Join(parts, "-")) + "." + ext
}

// SafeFileName replaces every character of name other than ASCII letters, digits, '.', '_',
// '+' and '-' by '-', so it can stand in a Content-Disposition header and on any file system.
func SafeFileName(name string) string {
	b := []byte(name)
	for i, c := range b {
		switch {
		case c >= 'a' && c <= 'z', c >= 'A' && c <= 'Z', c >= '0' && c <= '9', c == '.', c == '_', c == '-', c == '+':
		default:
			b[i] = '-'
		}
	}
	return string(b)
}
