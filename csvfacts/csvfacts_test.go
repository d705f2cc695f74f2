package csvfacts

import (
	"reflect"
	"testing"
)

func TestColumns(t *testing.T) {
	cases := []struct {
		name  string
		f     Facts
		names []string
	}{
		{"none", Facts{}, nil},
		{"all", Facts{Dataset: "d", Model: "gdh1", Label: "SYNTHETIC", Caution: "not for navigation, see charts", Provenance: map[string]string{"a": "<b>"}},
			[]string{"dataset", "model", "data_label", "caution", "provenance"}},
		{"no label", Facts{Dataset: "d", Model: "m", Caution: "c"}, []string{"dataset", "model", "caution"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cs, err := c.f.Columns()
			if err != nil {
				t.Fatal(err)
			}
			var names []string
			for _, col := range cs {
				names = append(names, col.Name)
				if col.Cell(0) != col.Value {
					t.Errorf("%s: first row %q, want %q", col.Name, col.Cell(0), col.Value)
				}
				if want := map[bool]string{true: "", false: col.Value}[col.FirstRowOnly]; col.Cell(3) != want {
					t.Errorf("%s: row 3 %q, want %q", col.Name, col.Cell(3), want)
				}
			}
			if !reflect.DeepEqual(names, c.names) {
				t.Fatalf("columns %v, want %v", names, c.names)
			}
			for _, col := range cs {
				if col.Name == "provenance" && col.Value != `{"a":"<b>"}` {
					t.Errorf("provenance %s: want JSON without HTML escaping", col.Value)
				}
			}
		})
	}
}
