package gdal

import (
	"encoding/json"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"ridgeflank/geo"
)

// TestNetCDFAttributesAsWritten: a JSON-valued global attribute keeps its quotes (GDAL's netCDF
// driver reads a "{…}" item as a list of numbers and drops them), and variable attributes
// (standard_name, positive) reach the file as text. Read back with ncdump -h, the netCDF
// library's own header dump (netCDF User Guide, "ncdump"), so GDAL does not read its own writing.
func TestNetCDFAttributesAsWritten(t *testing.T) {
	ncdump, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("ncdump not installed (apt netcdf-bin)")
	}
	g := geo.NewGrid(4, 3, 10, -20, 0.5, 0.5, geo.CellCentre)
	params := `{"id":"gdh1","plate_thickness_km":95,"source":"Stein & Stein (1992)"}`
	m := Meta{Name: "predicted_depth", Units: "m", LongName: "Predicted depth",
		Metadata:     map[string]string{"ridgeflank_model_params": params, "ridgeflank_model": "gdh1"},
		BandMetadata: map[string]string{"standard_name": "sea_floor_depth_below_sea_surface", "positive": "down"}}
	path := filepath.Join(t.TempDir(), "a.nc")
	if err := WriteNetCDF(path, g, m); err != nil {
		t.Fatal(err)
	}
	raw, err := exec.Command(ncdump, "-h", path).Output()
	if err != nil {
		t.Fatal(err)
	}
	hdr := string(raw)
	attr := func(scope, name string) string {
		re := regexp.MustCompile(regexp.QuoteMeta(scope+":"+name) + ` = "((?:[^"\\]|\\.)*)" ;`)
		mm := re.FindStringSubmatch(hdr)
		if mm == nil {
			t.Fatalf("no text attribute %s:%s in\n%s", scope, name, hdr)
		}
		return strings.ReplaceAll(mm[1], `\"`, `"`)
	}
	got := attr("", "ridgeflank_model_params")
	var v map[string]any
	if err := json.Unmarshal([]byte(got), &v); err != nil || v["id"] != "gdh1" || v["plate_thickness_km"] != 95.0 {
		t.Errorf("ridgeflank_model_params = %q: not the JSON written (%v)", got, err)
	}
	if got := attr("\t\tpredicted_depth", "standard_name"); got != "sea_floor_depth_below_sea_surface" {
		t.Errorf("standard_name = %q", got)
	}
	if got := attr("\t\tpredicted_depth", "positive"); got != "down" {
		t.Errorf("positive = %q", got)
	}
}
