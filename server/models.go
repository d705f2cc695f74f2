package server

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// DefaultModel is the model used when a query gives no model=.
const DefaultModel = evaluate.DefaultModel

func isBuiltin(id string) bool { return evaluate.IsBuiltin(id) }

// modelFromPath resolves {modelId}, answering 404 when it does not exist.
func (s *server) modelFromPath(r *http.Request) (thermal.Model, error) {
	m, err := s.ev.Model(r.Context(), chi.URLParam(r, "modelId"))
	if f, ok := fault.As(err); ok && f.Kind == fault.UnknownModel {
		return nil, problem(CodeNotFound, "%s", f.Msg)
	}
	return m, err
}

type modelJSON struct {
	ID      string         `json:"id"`
	Name    string         `json:"name"`
	Kind    string         `json:"kind"`
	Builtin bool           `json:"builtin"`
	Params  thermal.Params `json:"params"`
	Links   []link         `json:"links"`
}

func (s *server) modelJSON(r *http.Request, p thermal.Params, builtin bool) modelJSON {
	base := s.baseURL(r) + "/api/models/" + p.ID
	return modelJSON{ID: p.ID, Name: p.Name, Kind: p.Kind, Builtin: builtin, Params: p, Links: []link{
		{Href: base, Rel: "self", Type: "application/json"},
		{Href: base + "/curve?ages=0:200:1", Rel: "related", Type: "application/json", Title: "depth, heat flow and thickness against age"},
		{Href: base + "/geotherm?age=50", Rel: "related", Type: "application/json", Title: "temperature against depth at 50 Ma"},
	}}
}

func (s *server) listModels(w http.ResponseWriter, r *http.Request) error {
	out := struct {
		Models []modelJSON `json:"models"`
	}{Models: []modelJSON{}}
	for _, id := range thermal.BuiltinIDs() {
		m, err := thermal.Builtin(id)
		if err != nil {
			return err
		}
		out.Models = append(out.Models, s.modelJSON(r, m.Params(), true))
	}
	custom, err := s.listCustomModels(r.Context())
	if err != nil {
		return err
	}
	for _, p := range custom {
		out.Models = append(out.Models, s.modelJSON(r, p, false))
	}
	return writeJSON(w, http.StatusOK, "", out)
}

func (s *server) getModel(w http.ResponseWriter, r *http.Request) error {
	m, err := s.modelFromPath(r)
	if err != nil {
		return err
	}
	return writeJSON(w, http.StatusOK, "", s.modelJSON(r, m.Params(), isBuiltin(m.Params().ID)))
}

// createModel stores a custom parameter set (thermal.Params as JSON). Its id
// must not collide with a built-in model.
func (s *server) createModel(w http.ResponseWriter, r *http.Request) error {
	var raw json.RawMessage
	if err := decodeJSON(r, &raw); err != nil {
		return err
	}
	// An optional field given as 0 is refused, not taken for absent (thermal.DecodeParams).
	p, decodeErr := thermal.DecodeParams(raw)
	if decodeErr != nil && !errors.Is(decodeErr, thermal.ErrInvalidParams) {
		return problem(CodeBadRequest, "the JSON body could not be read: %v", decodeErr).withCause(decodeErr)
	}
	p.ID = strings.TrimSpace(p.ID)
	if !validID(p.ID) {
		return problem(CodeInvalidModelParams, "id %q must be 1 to 64 characters from a-z, 0-9, '-' and '_'", p.ID).withParam("id")
	}
	if isBuiltin(p.ID) {
		return problem(CodeConflict, "%q is a built-in model id", p.ID)
	}
	if err := evaluate.CheckModel(p, decodeErr); err != nil {
		return err
	}
	if err := s.saveCustomModel(r.Context(), p); err != nil {
		return err
	}
	w.Header().Set("Location", s.baseURL(r)+"/api/models/"+p.ID)
	return writeJSON(w, http.StatusCreated, "", s.modelJSON(r, p, false))
}

// validID is evaluate.ValidID, the one rule for ids clients choose.
func validID(id string) bool { return evaluate.ValidID(id) }

// parseRange reads "start:stop:step" (inclusive of stop when it falls on a
// step) or a single number.
func parseRange(name, v string, maxPoints int) ([]float64, error) {
	parts := strings.Split(v, ":")
	nums := make([]float64, len(parts))
	for i, p := range parts {
		f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return nil, problem(CodeInvalidParameter, "%s=%q: %q is not a number (expected start:stop:step)", name, v, p).withParam(name)
		}
		nums[i] = f
	}
	switch len(nums) {
	case 1:
		return nums, nil
	case 3:
	default:
		return nil, problem(CodeInvalidParameter, "%s=%q: expected start:stop:step or one number", name, v).withParam(name)
	}
	start, stop, step := nums[0], nums[1], nums[2]
	if step <= 0 || stop < start {
		return nil, problem(CodeInvalidParameter, "%s=%q: need start ≤ stop and step > 0", name, v).withParam(name)
	}
	// Count in floating point first: a tiny step over a huge span overflows int (and Inf or
	// NaN converts to nonsense), so the limit is checked before any integer is made.
	nf := math.Floor((stop-start)/step+1e-9) + 1
	if !(nf <= float64(maxPoints)) {
		return nil, limitProblem(http.StatusUnprocessableEntity, "max_curve_points", int64(maxPoints),
			"%s=%q asks for %.4g values; the limit is %d", name, v, nf, maxPoints).withParam(name)
	}
	n := int(nf)
	out := make([]float64, n)
	for i := range out {
		out[i] = start + float64(i)*step
	}
	return out, nil
}

// wantCSV reads f= for endpoints that answer JSON (default) or CSV.
func wantCSV(r *http.Request) (bool, error) {
	switch f := strings.ToLower(queryOf(r).Get("f")); f {
	case "", "json", "application/json":
		return false, nil
	case "csv", "text/csv":
		return true, nil
	default:
		return false, problem(CodeUnsupportedFormat, "f=%q: this endpoint answers json or csv", f).withParam("f")
	}
}

func (s *server) modelCurve(w http.ResponseWriter, r *http.Request) error {
	m, err := s.modelFromPath(r)
	if err != nil {
		return err
	}
	q := queryOf(r)
	spec := q.Get("ages")
	if spec == "" {
		spec = "0:200:1"
	}
	ages, err := parseRange("ages", spec, s.limits.MaxCurvePoints)
	if err != nil {
		return err
	}
	asCSV, err := wantCSV(r)
	if err != nil {
		return err
	}
	depth, hf, thick, iso, rate, err := evaluate.Curve(r.Context(), m, "ages", ages)
	if err != nil {
		return err
	}
	prov := s.provenance(m)
	prov.Caution = Caution
	setProvenance(w, prov)
	if asCSV {
		cols := make([]evaluate.CSVColumn, len(evaluate.CurveColumns))
		for i, v := range [][]float64{ages, depth, hf, thick, iso, rate} {
			cols[i] = numCol(evaluate.CurveColumns[i], v)
		}
		return writeCSV(w, "curve-"+m.Params().ID+".csv", evaluate.FactsOf(prov), cols...)
	}
	out := map[string]any{"model": m.Params().ID, "provenance": prov}
	for i, col := range [][]float64{ages, depth, hf, thick, iso, rate} {
		out[evaluate.CurveColumns[i]] = floats(col)
	}
	return writeJSON(w, http.StatusOK, "", out)
}

func (s *server) modelGeotherm(w http.ResponseWriter, r *http.Request) error {
	m, err := s.modelFromPath(r)
	if err != nil {
		return err
	}
	q := queryOf(r)
	ageStr := q.Get("age")
	if ageStr == "" {
		return problem(CodeInvalidParameter, "age= is required (Ma)").withParam("age")
	}
	age, err := strconv.ParseFloat(ageStr, 64)
	if err != nil || math.IsNaN(age) {
		return problem(CodeInvalidParameter, "age=%q is not a number", ageStr).withParam("age")
	}
	if err := evaluate.CheckAges("age", age); err != nil {
		return err
	}
	spec := q.Get("depths")
	if spec == "" {
		spec = fmt.Sprintf("0:%g:1", evaluate.GeothermMaxKm(m.Params()))
	}
	depths, err := parseRange("depths", spec, s.limits.MaxCurvePoints)
	if err != nil {
		return err
	}
	if depths[0] < 0 || depths[len(depths)-1] > 1000 {
		return problem(CodeInvalidParameter, "depths must lie within 0 to 1000 km").withParam("depths")
	}
	asCSV, err := wantCSV(r)
	if err != nil {
		return err
	}
	temps := make([]float64, len(depths))
	for i, z := range depths {
		temps[i] = m.TemperatureC(z, age)
	}
	prov := s.provenance(m)
	setProvenance(w, prov)
	if asCSV {
		return writeCSV(w, "geotherm-"+m.Params().ID+".csv", evaluate.FactsOf(prov), numCol("depth_km", depths), numCol("temperature_c", temps))
	}
	return writeJSON(w, http.StatusOK, "", map[string]any{
		"model":                m.Params().ID,
		"age_ma":               jsonFloat(age),
		"depth_km":             floats(depths),
		"temperature_c":        floats(temps),
		"thermal_thickness_km": jsonFloat(m.ThermalThicknessKm(age)),
		"depth_600c_km":        jsonFloat(m.IsothermDepthKm(600, age)),
		"provenance":           prov,
	})
}

// writeCSV answers cols as the CSV file filename, written by evaluate.WriteCSV (the header row
// first; dataset, model, caution and provenance in columns of their own).
func writeCSV(w http.ResponseWriter, filename string, facts evaluate.CSVFacts, cols ...evaluate.CSVColumn) error {
	w.Header().Set("Content-Type", "text/csv; charset=utf-8; header=present")
	w.Header().Set("Content-Disposition", `attachment; filename="`+evaluate.SafeFileName(filename)+`"`)
	return evaluate.WriteCSV(w, cols, facts)
}

// numCol is a CSV column of numbers written by the one CSV number rule (numjson.CSV).
func numCol(name string, v []float64) evaluate.CSVColumn {
	return evaluate.CSVColumn{Name: name, Values: v}
}

// modelRidgePush answers the ridge push per unit ridge length (N/m) at ages=start:stop:step
// (default 0:200:10) under the model: evaluate.RidgePush.
func (s *server) modelRidgePush(w http.ResponseWriter, r *http.Request) error {
	m, err := s.modelFromPath(r)
	if err != nil {
		return err
	}
	spec := queryOf(r).Get("ages")
	if spec == "" {
		spec = "0:200:10"
	}
	ages, err := parseRange("ages", spec, s.limits.MaxCurvePoints)
	if err != nil {
		return err
	}
	asCSV, err := wantCSV(r)
	if err != nil {
		return err
	}
	push, err := evaluate.RidgePush(r.Context(), m, "ages", ages)
	if err != nil {
		return err
	}
	prov := s.provenance(m)
	setProvenance(w, prov)
	if asCSV {
		return writeCSV(w, "ridge-push-"+m.Params().ID+".csv", evaluate.FactsOf(prov), numCol("age_ma", ages), numCol(evaluate.RidgePushColumn, push))
	}
	return writeJSON(w, http.StatusOK, "", map[string]any{
		"model":                  m.Params().ID,
		"age_ma":                 floats(ages),
		evaluate.RidgePushColumn: floats(push),
		"provenance":             prov,
	})
}
