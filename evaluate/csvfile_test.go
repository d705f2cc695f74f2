package evaluate

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// TestWriteCSVHeaderFirst: the first record is the header row (RFC 4180 §2 item 3: an optional
// header line "appearing as the first line of the file"), every record has its length, the
// facts sit in their own columns (caution and provenance on the first data row only) and
// non-finite values are empty fields. Parsed back with encoding/csv, an RFC 4180 reader.
func TestWriteCSVHeaderFirst(t *testing.T) {
	cases := []struct {
		name     string
		cols     []CSVColumn
		facts    CSVFacts
		wantHead []string
		rows     int
	}{
		{"two rows", []CSVColumn{{Name: "longitude", Values: []float64{1, 2}}, {Name: "latitude", Values: []float64{-3, -4}},
			{Name: "observed_depth_m", Values: []float64{4000, math.NaN()}}},
			CSVFacts{Dataset: "d", Model: "gdh1", Label: SyntheticLabel, Caution: Caution, Provenance: map[string]any{"software": "x, with a comma & \"quotes\""}},
			[]string{"longitude", "latitude", "observed_depth_m", "dataset", "model", "data_label", "caution", "provenance"}, 2},
		{"no rows keeps the facts", []CSVColumn{{Name: "longitude"}, {Name: "latitude"}},
			CSVFacts{Dataset: "d", Caution: Caution},
			[]string{"longitude", "latitude", "dataset", "caution"}, 1},
		{"no facts", []CSVColumn{{Name: "depth_km", Values: []float64{1}}}, CSVFacts{}, []string{"depth_km"}, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b bytes.Buffer
			if err := WriteCSV(&b, c.cols, c.facts); err != nil {
				t.Fatal(err)
			}
			recs, err := csv.NewReader(&b).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			if strings.Join(recs[0], "|") != strings.Join(c.wantHead, "|") {
				t.Fatalf("header %q, want %q", recs[0], c.wantHead)
			}
			if len(recs)-1 != c.rows {
				t.Fatalf("%d data rows, want %d", len(recs)-1, c.rows)
			}
			col := map[string]int{}
			for i, h := range recs[0] {
				col[h] = i
			}
			if i, ok := col["caution"]; ok {
				if recs[1][i] != c.facts.Caution {
					t.Errorf("first row caution %q", recs[1][i])
				}
				for _, r := range recs[2:] {
					if r[i] != "" {
						t.Errorf("caution repeated on a later row")
					}
				}
			}
			if i, ok := col["provenance"]; ok {
				var v map[string]any
				if err := json.Unmarshal([]byte(recs[1][i]), &v); err != nil || v["software"] != "x, with a comma & \"quotes\"" {
					t.Errorf("provenance %q is not the JSON given: %v", recs[1][i], err)
				}
			}
			if i, ok := col["observed_depth_m"]; ok && recs[2][i] != "" {
				t.Errorf("NaN written as %q, want an empty field", recs[2][i])
			}
			if i, ok := col["dataset"]; ok {
				for _, r := range recs[1:] {
					if r[i] != c.facts.Dataset {
						t.Errorf("dataset %q on a row, want %q on every row", r[i], c.facts.Dataset)
					}
				}
			}
		})
	}
}
