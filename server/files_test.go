package server

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/ingest"
	"ridgeflank/store"
)

// csvRecords parses an answer with encoding/csv (an RFC 4180 reader) and returns its records
// with the column index of each header name.
func csvRecords(t *testing.T, r reply) ([][]string, map[string]int) {
	t.Helper()
	recs, err := csv.NewReader(strings.NewReader(string(r.Body))).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("CSV answer does not parse as CSV (%v):\n%s", err, trunc(r.Body))
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	return recs, col
}

// ogrFields lists the fields GDAL's CSV driver reads from the file (ogrinfo -al -so with the
// driver's open options opts), as "name: Type".
func ogrFields(t *testing.T, body []byte, opts ...string) string {
	t.Helper()
	ogrinfo, err := exec.LookPath("ogrinfo")
	if err != nil {
		t.Skip("ogrinfo (GDAL) not installed")
	}
	path := filepath.Join(t.TempDir(), "answer.csv")
	if err := os.WriteFile(path, body, 0o644); err != nil {
		t.Fatal(err)
	}
	args := []string{"-ro", "-al", "-so"}
	for _, o := range opts {
		args = append(args, "-oo", o)
	}
	out, err := exec.Command(ogrinfo, append(args, path)...).CombinedOutput()
	if err != nil {
		t.Fatalf("ogrinfo: %v\n%s", err, out)
	}
	return string(out)
}

// ncAttr reads a text attribute of the netCDF file body with ncdump -h, the netCDF library's
// header dump ("" when absent; the test skips without ncdump).
func ncAttrs(t *testing.T, body []byte) func(scope, name string) string {
	t.Helper()
	ncdump, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("ncdump not installed (apt netcdf-bin)")
	}
	path := filepath.Join(t.TempDir(), "answer.nc")
	if err := os.WriteFile(path, body, 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(ncdump, "-h", path).Output()
	if err != nil {
		t.Fatal(err)
	}
	hdr := string(out)
	return func(scope, name string) string {
		re := regexp.MustCompile(`(?m)^\s*` + regexp.QuoteMeta(scope+":"+name) + ` = "((?:[^"\\]|\\.)*)" ;`)
		m := re.FindStringSubmatch(hdr)
		if m == nil {
			return ""
		}
		return strings.NewReplacer(`\"`, `"`, `\\`, `\`).Replace(m[1])
	}
}

// TestFilesOpenElsewhere: CSV, GeoJSON and netCDF answers read as another group's tool reads
// them.
func TestFilesOpenElsewhere(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	ds := "/api/collections/" + e.dataset
	clon, clat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
	poly := esc(fmt.Sprintf("POLYGON((%g %g,%g %g,%g %g,%g %g,%g %g))", clon-2, clat-2, clon+2, clat-2, clon+2, clat+2, clon-2, clat+2, clon-2, clat-2))
	area := ds + "/area?coords=" + poly + "&parameter-name=residual_depth&resolution-x=0.5&resolution-y=0.5"

	t.Run("CSV header first, facts inside", func(t *testing.T) {
		r := e.get(area + "&f=csv")
		e.want(r, 200)
		recs, col := csvRecords(t, r)
		for _, h := range []string{"longitude", "latitude", "residual_depth_m", "dataset", "model", "caution", "provenance"} {
			if _, ok := col[h]; !ok {
				t.Errorf("CSV header %q lacks %s", recs[0], h)
			}
		}
		if col["longitude"] != 0 || col["latitude"] != 1 {
			t.Errorf("header row %q: longitude, latitude first", recs[0])
		}
		first := recs[1]
		if first[col["dataset"]] != e.dataset || first[col["model"]] != evaluate.DefaultModel || !strings.Contains(first[col["caution"]], "not for navigation") {
			t.Errorf("first row facts: dataset %q, model %q, caution %q", first[col["dataset"]], first[col["model"]], first[col["caution"]])
		}
		var prov evaluate.Provenance
		if err := json.Unmarshal([]byte(first[col["provenance"]]), &prov); err != nil || prov.Model == nil || prov.Dataset != e.dataset {
			t.Fatalf("provenance cell %q is not the answer's provenance: %v", first[col["provenance"]], err)
		}
		// GDH1 derives κ = k / (ρm cp) = 3.138 / (3330 × 1171) = 8.047e-7 m²/s (Stein & Stein
		// 1992, Nature 359, 123–129, table 1 values; ± 0.1 %).
		if k := prov.Model.Params.DiffusivityM2s; math.Abs(k-8.047e-7) > 8e-10 {
			t.Errorf("provenance diffusivity_m2_s = %g, want the derived 8.047e-7", k)
		}
		// As the file is (every field text) and with the driver's type detection and
		// coordinate columns (GDAL CSV driver open options AUTODETECT_TYPE, X/Y_POSSIBLE_NAMES).
		for _, c := range []struct {
			opts   []string
			fields []string
		}{
			{nil, []string{"longitude: String", "latitude: String", "residual_depth_m: String", "caution: String"}},
			{[]string{"AUTODETECT_TYPE=YES", "X_POSSIBLE_NAMES=longitude", "Y_POSSIBLE_NAMES=latitude"},
				[]string{"Geometry: Point", "longitude: Real", "latitude: Real", "residual_depth_m: Real", "provenance: String"}},
		} {
			fields := ogrFields(t, r.Body, c.opts...)
			for _, f := range c.fields {
				if !strings.Contains(fields, f) {
					t.Errorf("GDAL's CSV driver (%v) does not read %s:\n%s", c.opts, f, fields)
				}
			}
			if !strings.Contains(fields, fmt.Sprintf("Feature Count: %d", len(recs)-1)) {
				t.Errorf("GDAL reads another number of rows than the %d data rows:\n%s", len(recs)-1, fields)
			}
		}
	})

	t.Run("download names say dataset, parameter and model", func(t *testing.T) {
		names := map[string]bool{}
		for _, m := range []string{"gdh1", "psm"} {
			for _, f := range []string{"csv", "netcdf", "COG"} {
				r := e.get(area + "&f=" + f + "&model=" + m)
				e.want(r, 200)
				cd := r.Header.Get("Content-Disposition")
				for _, part := range []string{e.dataset, "residual_depth", m} {
					if !strings.Contains(cd, part) {
						t.Errorf("%s %s: Content-Disposition %q lacks %q", m, f, cd, part)
					}
				}
				names[cd] = true
			}
		}
		if len(names) != 6 {
			t.Errorf("%d distinct file names for 2 models × 3 formats", len(names))
		}
	})

	t.Run("one field name in CSV and GeoJSON", func(t *testing.T) {
		pt := esc(fmt.Sprintf("POINT(%g %g)", clon, clat))
		params := "&parameter-name=observed_depth,heat_flow,seafloor_age"
		_, col := csvRecords(t, e.get(ds+"/position?coords="+pt+params+"&f=csv"))
		gj := e.get(ds + "/position?coords=" + pt + params + "&f=geojson").json(t)
		cov := e.get(ds + "/position?coords=" + pt + params).json(t)["parameters"].(map[string]any)
		fields := map[string]bool{}
		for _, p := range cov {
			fields[fmt.Sprint(p.(map[string]any)["ridgeflank:field"])] = true
		}
		props := gj["features"].([]any)[0].(map[string]any)["properties"].(map[string]any)
		units := gj["units"].(map[string]any)
		for _, name := range []string{"observed_depth_m", "heat_flow_mw_m2", "seafloor_age_ma"} {
			if _, ok := col[name]; !ok {
				t.Errorf("CSV lacks column %s", name)
			}
			if _, ok := props[name]; !ok {
				t.Errorf("GeoJSON lacks property %s: %v", name, props)
			}
			if _, ok := units[name]; !ok {
				t.Errorf("GeoJSON units lack %s", name)
			}
			if !fields[name] {
				t.Errorf("no CoverageJSON parameter gives ridgeflank:field %s", name)
			}
		}
	})

	t.Run("netCDF CF attributes", func(t *testing.T) {
		for _, c := range []struct{ param, standard, positive string }{
			// CF Standard Name Table: sea_floor_depth_below_sea_surface (m),
			// upward_geothermal_heat_flux_at_sea_floor (W m-2).
			{"predicted_depth", "sea_floor_depth_below_sea_surface", "down"},
			{"observed_depth", "sea_floor_depth_below_sea_surface", "down"},
			{"heat_flow", "upward_geothermal_heat_flux_at_sea_floor", ""},
			{"residual_depth", "", ""},
		} {
			t.Run(c.param, func(t *testing.T) {
				r := e.get(ds + "/area?coords=" + poly + "&parameter-name=" + c.param + "&resolution-x=0.5&resolution-y=0.5&f=netcdf")
				e.want(r, 200)
				attr := ncAttrs(t, r.Body)
				if got := attr("\t\t"+c.param, "standard_name"); got != c.standard {
					t.Errorf("standard_name %q, want %q", got, c.standard)
				}
				if got := attr("\t\t"+c.param, "positive"); got != c.positive {
					t.Errorf("positive %q, want %q", got, c.positive)
				}
				if attr("\t\t"+c.param, "sign_convention") == "" {
					t.Errorf("no sign_convention attribute")
				}
				if c.param == "observed_depth" {
					return // no model
				}
				var params map[string]any
				raw := attr("", "ridgeflank_model_params")
				if err := json.Unmarshal([]byte(raw), &params); err != nil {
					t.Fatalf("ridgeflank_model_params %q is not JSON: %v", raw, err)
				}
				if k, _ := params["diffusivity_m2_s"].(float64); !(k > 1e-7) {
					t.Errorf("diffusivity_m2_s %v in the file, want the derived value", params["diffusivity_m2_s"])
				}
				var prov evaluate.Provenance
				if err := json.Unmarshal([]byte(attr("", "ridgeflank_provenance")), &prov); err != nil || prov.Model == nil {
					t.Errorf("ridgeflank_provenance is not the provenance JSON: %v", err)
				}
			})
		}
	})
}

// TestSyntheticLabelKept: a dataset of the demo basin's SYNTHETIC age grid and a user's own
// bathymetry still says SYNTHETIC in every answer (JSON provenance, CSV, netCDF, COG).
func TestSyntheticLabelKept(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	ctx := context.Background()
	demo, err := e.st.GetDataset(ctx, e.dataset)
	if err != nil {
		t.Fatal(err)
	}
	b := testBasin(t)
	own := *b.Age
	own.Data = make([]float32, len(b.Age.Data))
	for i := range own.Data {
		own.Data[i] = 4200 // a flat 4,200 m sea floor, the user's "survey"
	}
	path := filepath.Join(t.TempDir(), "multibeam.tif")
	if err := gdal.WriteCOG(path, &own, gdal.Meta{Units: "m", Sense: geo.DepthPositiveDown, Title: "cruise multibeam"}); err != nil {
		t.Fatal(err)
	}
	res, err := ingest.Import(ctx, e.st, ingest.Request{Path: path, Kind: store.KindDepth, Name: "cruise multibeam", Provenance: "own survey", Licence: "CC-BY-4.0"}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := e.st.CreateDataset(ctx, store.Dataset{ID: "mixed", Name: "Our flank", AgeGridID: demo.AgeGridID, DepthGridID: res.Grid.ID}); err != nil {
		t.Fatal(err)
	}
	clon, clat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
	pt := esc(fmt.Sprintf("POINT(%g %g)", clon, clat))
	poly := esc(fmt.Sprintf("POLYGON((%g %g,%g %g,%g %g,%g %g))", clon-1, clat-1, clon+1, clat-1, clon+1, clat+1, clon-1, clat-1))
	ds := "/api/collections/mixed"

	j := e.get(ds + "/position?coords=" + pt + "&parameter-name=residual_depth").json(t)
	prov, _ := j["ridgeflank:provenance"].(map[string]any)
	if prov == nil || prov["label"] != evaluate.SyntheticLabel {
		t.Errorf("CoverageJSON provenance %v lacks label SYNTHETIC", j["ridgeflank:provenance"])
	}
	recs, col := csvRecords(t, e.get(ds+"/position?coords="+pt+"&parameter-name=residual_depth&f=csv"))
	if i, ok := col["data_label"]; !ok || recs[1][i] != evaluate.SyntheticLabel {
		t.Errorf("CSV header %q: no data_label SYNTHETIC", recs[0])
	}
	nc := e.get(ds + "/area?coords=" + poly + "&parameter-name=residual_depth&f=netcdf")
	e.want(nc, 200)
	if got := ncAttrs(t, nc.Body)("", "ridgeflank_data_label"); got != evaluate.SyntheticLabel {
		t.Errorf("netCDF ridgeflank_data_label %q", got)
	}
	cog := e.get(ds + "/area?coords=" + poly + "&parameter-name=residual_depth&f=COG")
	e.want(cog, 200)
	cogPath := filepath.Join(t.TempDir(), "a.tif")
	os.WriteFile(cogPath, cog.Body, 0o644)
	_, meta, err := gdal.Read(cogPath)
	if err != nil {
		t.Fatal(err)
	}
	if meta.Metadata["ridgeflank_data_label"] != evaluate.SyntheticLabel {
		t.Errorf("COG metadata %v lacks ridgeflank_data_label", meta.Metadata)
	}
}
