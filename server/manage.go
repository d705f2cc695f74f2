package server

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"net/http"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/jobs"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// ---- custom models (store adapters) ----

func (s *server) listCustomModels(ctx context.Context) ([]thermal.Params, error) {
	if s.deps.Store == nil {
		return nil, nil
	}
	ms, err := s.deps.Store.ListModels(ctx, store.Page{})
	if err != nil {
		return nil, err
	}
	out := make([]thermal.Params, 0, len(ms))
	for _, m := range ms {
		var p thermal.Params
		if err := json.Unmarshal(m.Params, &p); err != nil {
			continue
		}
		p.ID = m.ID
		out = append(out, p)
	}
	return out, nil
}

func (s *server) saveCustomModel(ctx context.Context, p thermal.Params) error {
	raw, err := json.Marshal(p)
	if err != nil {
		return err
	}
	_, err = s.deps.Store.CreateModel(ctx, store.Model{ID: p.ID, Name: p.Name, Description: p.Source, Params: raw})
	if errors.Is(err, store.ErrConflict) {
		return problem(CodeConflict, "a model with id %q already exists", p.ID).withCause(err)
	}
	return err
}

// ---- regions ----

// regionFeature is a region as a GeoJSON Feature; the version is both a
// property and the ETag.
func (s *server) regionFeature(r *http.Request, rg store.Region) map[string]any {
	return map[string]any{
		"type":     "Feature",
		"id":       rg.ID,
		"geometry": geometryJSON(rg.Geometry),
		"properties": map[string]any{
			"name":        rg.Name,
			"description": rg.Description,
			"tags":        rg.Tags,
			"owner":       rg.Owner,
			"version":     rg.Version,
			"area_km2":    jsonFloat(geo.SphericalAreaKm2(rg.Geometry)),
			"created_at":  rg.CreatedAt.UTC().Format(time.RFC3339Nano),
			"updated_at":  rg.UpdatedAt.UTC().Format(time.RFC3339Nano),
		},
		"links": []link{{Href: s.baseURL(r) + "/api/regions/" + rg.ID, Rel: "self", Type: MediaGeoJSON}},
	}
}

func etag(version int64) string { return `"` + strconv.FormatInt(version, 10) + `"` }

// ifMatch is a request's If-Match precondition (RFC 9110 §13.1.1): absent, "*" (any current
// version), or a list of entity tags, each a version this API issued ("3", W/"3" compares weakly
// only for reads, so a weak tag here is taken as the version it names).
type ifMatch struct {
	present  bool
	any      bool
	versions []int64
}

// parseIfMatch reads If-Match: "*", or one or more comma-separated tags ("3", "\"3\"", W/"3").
// A tag that is not a version this API issued is a 412 (it can match nothing).
func parseIfMatch(r *http.Request) (ifMatch, error) {
	raw := strings.TrimSpace(strings.Join(r.Header.Values("If-Match"), ","))
	if raw == "" {
		return ifMatch{}, nil
	}
	if raw == "*" {
		return ifMatch{present: true, any: true}, nil
	}
	m := ifMatch{present: true}
	for _, part := range strings.Split(raw, ",") {
		v := strings.Trim(strings.TrimPrefix(strings.TrimSpace(part), "W/"), `"`)
		if v == "" {
			continue
		}
		n, err := strconv.ParseInt(v, 10, 64)
		if err != nil || n < 1 {
			return ifMatch{}, problem(CodePreconditionFailed, "If-Match %q: %q is not a version this API issued (an ETag like \"3\")", raw, strings.TrimSpace(part))
		}
		m.versions = append(m.versions, n)
	}
	if len(m.versions) == 0 {
		return ifMatch{}, problem(CodePreconditionFailed, "If-Match %q names no version", raw)
	}
	return m, nil
}

// maxStarRetries bounds how often a write under If-Match: * is retried when another writer
// changed the resource between the read and the write.
const maxStarRetries = 8

// write runs fn under the precondition: with one listed version, fn(that version) and the store
// refuses it if stale; with a list, the version current() reads must be listed (else 412) and
// fn runs against it; with "*" (any current version), fn runs against the current version and
// is retried when another writer got in between, since any version satisfies "*". Without
// If-Match fn(0) runs (the store's "any version" where a route allows that).
func (m ifMatch) write(current func() (int64, error), fn func(version int64) error) error {
	switch {
	case !m.present:
		return fn(0)
	case len(m.versions) == 1:
		return fn(m.versions[0])
	}
	for try := 0; ; try++ {
		cur, err := current()
		if err != nil {
			return err
		}
		if !m.any && !slices.Contains(m.versions, cur) {
			return problem(CodePreconditionFailed, "the current version %d is none of the If-Match versions %v", cur, m.versions)
		}
		err = fn(cur)
		if m.any && errors.Is(err, store.ErrVersionMismatch) && try < maxStarRetries {
			continue
		}
		return err
	}
}

// regionInput is the body of POST/PUT /api/regions: a GeoJSON Feature with
// a Polygon or MultiPolygon and name/description/tags properties.
type regionInput struct {
	ID          string
	Name        string
	Description string
	Tags        []string
	Geometry    orb.MultiPolygon
	Repairs     []string // what was repaired to make the geometry valid
}

func (s *server) readRegion(r *http.Request) (regionInput, error) {
	var in regionInput
	var raw struct {
		Type       string          `json:"type"`
		ID         any             `json:"id"`
		Geometry   json.RawMessage `json:"geometry"`
		Properties struct {
			Name        string   `json:"name"`
			Description string   `json:"description"`
			Tags        []string `json:"tags"`
		} `json:"properties"`
	}
	body, err := readAllLimited(r)
	if err != nil {
		return in, err
	}
	if err := json.Unmarshal(body, &raw); err != nil {
		return in, problem(CodeInvalidGeoJSON, "the body is not a GeoJSON Feature: %v", err).withCause(err)
	}
	if raw.Type != "Feature" {
		return in, problem(CodeInvalidGeoJSON, "the body must be a GeoJSON Feature, got type %q", raw.Type)
	}
	// The vertex limit and validity are the evaluate service's (geo.PrepareRegion, the same for
	// stored regions and area queries, repairs reported); the body limit bounds what is decoded.
	reg, err := s.ev.PrepareRegionGeoJSON(raw.Geometry, "geometry")
	if err != nil {
		return in, err
	}
	in.Geometry, in.Repairs = reg.Parts, reg.Repairs
	if id, ok := raw.ID.(string); ok {
		in.ID = id
	}
	in.Name, in.Description, in.Tags = strings.TrimSpace(raw.Properties.Name), raw.Properties.Description, raw.Properties.Tags
	if in.Name == "" {
		return in, problem(CodeInvalidGeoJSON, "properties.name is required").withParam("name")
	}
	return in, nil
}

func readAllLimited(r *http.Request) ([]byte, error) {
	ct := r.Header.Get("Content-Type")
	if ct != "" && !strings.Contains(ct, "json") {
		return nil, problem(CodeUnsupportedMedia, "expected a JSON body, got Content-Type %q", ct)
	}
	return io.ReadAll(r.Body) // bounded by the bodyLimit middleware
}

func (s *server) listRegions(w http.ResponseWriter, r *http.Request) error {
	f := store.RegionFilter{Tag: queryOf(r).Get("tag")}
	if bb := queryOf(r).Get("bbox"); bb != "" {
		b, err := parseBBox(bb)
		if err != nil {
			return err
		}
		f.BBox = &b
	}
	rs, err := s.deps.Store.ListRegions(r.Context(), f)
	if err != nil {
		return err
	}
	feats := make([]any, len(rs))
	for i, rg := range rs {
		feats[i] = s.regionFeature(r, rg)
	}
	return writeJSON(w, http.StatusOK, MediaGeoJSON, map[string]any{"type": "FeatureCollection", "features": feats})
}

func parseBBox(v string) (orb.Bound, error) {
	parts := strings.Split(v, ",")
	if len(parts) != 4 {
		return orb.Bound{}, problem(CodeInvalidParameter, "bbox=%q: want west,south,east,north", v).withParam("bbox")
	}
	var n [4]float64
	for i, p := range parts {
		f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return orb.Bound{}, problem(CodeInvalidParameter, "bbox=%q: %q is not a number", v, p).withParam("bbox")
		}
		n[i] = f
	}
	if n[1] > n[3] || n[1] < -90 || n[3] > 90 {
		return orb.Bound{}, problem(CodeInvalidParameter, "bbox=%q: need −90 ≤ south ≤ north ≤ 90", v).withParam("bbox")
	}
	if n[0] < -180 || n[0] > 360 || n[2] < -180 || n[2] > 360 {
		return orb.Bound{}, problem(CodeInvalidParameter, "bbox=%q: longitudes must lie within −180..360", v).withParam("bbox")
	}
	return orb.Bound{Min: orb.Point{n[0], n[1]}, Max: orb.Point{n[2], n[3]}}, nil
}

func (s *server) createRegion(w http.ResponseWriter, r *http.Request) error {
	in, err := s.readRegion(r)
	if err != nil {
		return err
	}
	if in.ID != "" && !validID(in.ID) {
		return problem(CodeInvalidParameter, "id %q must be 1 to 64 characters from a-z, 0-9, '-' and '_'", in.ID).withParam("id")
	}
	owner := ""
	if p := principalOf(r.Context()); p.Token != nil {
		owner = p.Token.Name
	}
	rg, err := s.deps.Store.CreateRegion(r.Context(), store.Region{ID: in.ID, Name: in.Name, Description: in.Description, Tags: in.Tags, Geometry: in.Geometry, Owner: owner})
	if err != nil {
		return err
	}
	w.Header().Set("Location", s.baseURL(r)+"/api/regions/"+rg.ID)
	w.Header().Set("ETag", etag(rg.Version))
	return writeJSON(w, http.StatusCreated, MediaGeoJSON, withRepairs(s.regionFeature(r, rg), in.Repairs))
}

func (s *server) getRegion(w http.ResponseWriter, r *http.Request) error {
	rg, err := s.deps.Store.GetRegion(r.Context(), chi.URLParam(r, "regionId"))
	if err != nil {
		return err
	}
	w.Header().Set("ETag", etag(rg.Version))
	return writeJSON(w, http.StatusOK, MediaGeoJSON, s.regionFeature(r, rg))
}

// withRepairs adds what was repaired to make a region valid (member "ridgeflank:repairs").
func withRepairs(f map[string]any, repairs []string) map[string]any {
	if len(repairs) > 0 {
		f["ridgeflank:repairs"] = repairs
	}
	return f
}

// updateRegion replaces a region. If-Match with the version last read is
// required (428 without it, 412 when someone else wrote first).
func (s *server) updateRegion(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "regionId")
	cond, err := parseIfMatch(r)
	if err != nil {
		return err
	}
	if !cond.present {
		return problem(CodePreconditionNeeded, "send If-Match with the region's ETag (its version) to update it")
	}
	in, err := s.readRegion(r)
	if err != nil {
		return err
	}
	if in.ID != "" && in.ID != id {
		return problem(CodeConflict, "the body's id %q differs from the path's %q", in.ID, id)
	}
	cur, err := s.deps.Store.GetRegion(r.Context(), id)
	if err != nil {
		return err
	}
	var rg store.Region
	err = cond.write(func() (int64, error) {
		c, err := s.deps.Store.GetRegion(r.Context(), id)
		return c.Version, err
	}, func(ver int64) error {
		var err error
		rg, err = s.deps.Store.UpdateRegion(r.Context(), store.Region{ID: id, Name: in.Name, Description: in.Description, Tags: in.Tags, Geometry: in.Geometry, Owner: cur.Owner, Version: ver})
		return err
	})
	if err != nil {
		return err
	}
	w.Header().Set("ETag", etag(rg.Version))
	return writeJSON(w, http.StatusOK, MediaGeoJSON, withRepairs(s.regionFeature(r, rg), in.Repairs))
}

func (s *server) deleteRegion(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "regionId")
	cond, err := parseIfMatch(r)
	if err != nil {
		return err
	}
	err = cond.write(func() (int64, error) {
		c, err := s.deps.Store.GetRegion(r.Context(), id)
		return c.Version, err
	}, func(ver int64) error { return s.deps.Store.DeleteRegion(r.Context(), id, ver) })
	if err != nil {
		return err
	}
	w.WriteHeader(http.StatusNoContent)
	return nil
}

// ---- grids ----

func (s *server) gridJSON(r *http.Request, g store.Grid) map[string]any {
	return map[string]any{
		"id": g.ID, "name": g.Name, "kind": g.Kind, "units": g.Units, "vertical_sense": g.VerticalSense,
		"footprint": geometryJSON(g.Footprint), "resolution_deg": g.ResolutionDeg,
		"registration": g.Registration, "provenance": g.Provenance, "licence": g.Licence,
		"sha256": g.ContentHash, "size_bytes": g.SizeBytes, "created_at": g.CreatedAt.UTC().Format(time.RFC3339Nano),
		"links": []link{{Href: s.baseURL(r) + "/api/grids/" + g.ID, Rel: "self", Type: "application/json"}},
	}
}

func (s *server) listGrids(w http.ResponseWriter, r *http.Request) error {
	f := store.GridFilter{Kind: store.GridKind(queryOf(r).Get("kind"))}
	gs, err := s.deps.Store.ListGrids(r.Context(), f)
	if err != nil {
		return err
	}
	out := make([]any, len(gs))
	for i, g := range gs {
		out[i] = s.gridJSON(r, g)
	}
	return writeJSON(w, http.StatusOK, "", map[string]any{"grids": out})
}

func (s *server) getGrid(w http.ResponseWriter, r *http.Request) error {
	g, err := s.deps.Store.GetGrid(r.Context(), chi.URLParam(r, "gridId"))
	if err != nil {
		return err
	}
	w.Header().Set("ETag", `"`+g.ContentHash+`"`)
	return writeJSON(w, http.StatusOK, "", s.gridJSON(r, g))
}

func (s *server) deleteGrid(w http.ResponseWriter, r *http.Request) error {
	defer s.ev.Forget()
	err := s.deps.Store.DeleteGrid(r.Context(), chi.URLParam(r, "gridId"))
	if errors.Is(err, store.ErrConflict) {
		return problem(CodeConflict, "grid %s is used by a dataset: delete or change the dataset first", chi.URLParam(r, "gridId")).withCause(err)
	}
	if err != nil {
		return err
	}
	w.WriteHeader(http.StatusNoContent)
	return nil
}

// ---- datasets ----

func (s *server) datasetJSON(r *http.Request, d store.Dataset) map[string]any {
	b := s.baseURL(r)
	return map[string]any{
		"id": d.ID, "name": d.Name, "description": d.Description,
		"age_grid_id": d.AgeGridID, "depth_grid_id": d.DepthGridID, "sediment_grid_id": d.SedimentGridID,
		"crust_grid_id": d.CrustGridID, "age_uncertainty_grid_id": d.AgeUncertaintyGridID,
		"version": d.Version, "created_at": d.CreatedAt.UTC().Format(time.RFC3339Nano), "updated_at": d.UpdatedAt.UTC().Format(time.RFC3339Nano),
		"links": []link{
			{Href: b + "/api/datasets/" + d.ID, Rel: "self", Type: "application/json"},
			{Href: b + "/api/collections/" + d.ID, Rel: "related", Type: "application/json", Title: "as an EDR collection"},
		},
	}
}

type datasetInput struct {
	ID                   string `json:"id"`
	Name                 string `json:"name"`
	Description          string `json:"description"`
	AgeGridID            string `json:"age_grid_id"`
	DepthGridID          string `json:"depth_grid_id"`
	SedimentGridID       string `json:"sediment_grid_id"`
	CrustGridID          string `json:"crust_grid_id"`
	AgeUncertaintyGridID string `json:"age_uncertainty_grid_id"`
}

func (s *server) listDatasets(w http.ResponseWriter, r *http.Request) error {
	ds, err := s.deps.Store.ListDatasets(r.Context(), store.Page{})
	if err != nil {
		return err
	}
	out := make([]any, len(ds))
	for i, d := range ds {
		out[i] = s.datasetJSON(r, d)
	}
	return writeJSON(w, http.StatusOK, "", map[string]any{"datasets": out})
}

func (s *server) createDataset(w http.ResponseWriter, r *http.Request) error {
	defer s.ev.Forget()
	var in datasetInput
	if err := decodeJSON(r, &in); err != nil {
		return err
	}
	if in.ID != "" && !validID(in.ID) {
		return problem(CodeInvalidParameter, "id %q must be 1 to 64 characters from a-z, 0-9, '-' and '_'", in.ID).withParam("id")
	}
	if in.AgeGridID == "" {
		return problem(CodeInvalidParameter, "age_grid_id is required").withParam("age_grid_id")
	}
	d, err := s.deps.Store.CreateDataset(r.Context(), store.Dataset{
		ID: in.ID, Name: in.Name, Description: in.Description, AgeGridID: in.AgeGridID, DepthGridID: in.DepthGridID,
		SedimentGridID: in.SedimentGridID, CrustGridID: in.CrustGridID, AgeUncertaintyGridID: in.AgeUncertaintyGridID,
	})
	if err != nil {
		if errors.Is(err, store.ErrNotFound) || errors.Is(err, store.ErrInvalid) {
			return problem(CodeInvalidParameter, "%v", err).withCause(err).withStatus(http.StatusUnprocessableEntity)
		}
		if errors.Is(err, store.ErrConflict) && in.ID != "" && store.DetailOf(err) != "" {
			// The database's constraint text stays in the log (h logs the detail).
			return problem(CodeConflict, "a dataset with id %q already exists", in.ID).withParam("id").withCause(err)
		}
		return err
	}
	w.Header().Set("Location", s.baseURL(r)+"/api/datasets/"+d.ID)
	w.Header().Set("ETag", etag(d.Version))
	return writeJSON(w, http.StatusCreated, "", s.datasetJSON(r, d))
}

func (s *server) getDataset(w http.ResponseWriter, r *http.Request) error {
	d, err := s.deps.Store.GetDataset(r.Context(), chi.URLParam(r, "datasetId"))
	if err != nil {
		return err
	}
	w.Header().Set("ETag", etag(d.Version))
	return writeJSON(w, http.StatusOK, "", s.datasetJSON(r, d))
}

func (s *server) deleteDataset(w http.ResponseWriter, r *http.Request) error {
	defer s.ev.Forget()
	id := chi.URLParam(r, "datasetId")
	cond, err := parseIfMatch(r)
	if err != nil {
		return err
	}
	err = cond.write(func() (int64, error) {
		c, err := s.deps.Store.GetDataset(r.Context(), id)
		return c.Version, err
	}, func(ver int64) error { return s.deps.Store.DeleteDataset(r.Context(), id, ver) })
	if err != nil {
		return err
	}
	w.WriteHeader(http.StatusNoContent)
	return nil
}

// ---- jobs ----

func (s *server) getJob(w http.ResponseWriter, r *http.Request) error {
	st, err := s.jobFromPath(r)
	if err != nil {
		return err
	}
	w.Header().Set("Cache-Control", "no-store")
	return writeJSON(w, http.StatusOK, "", jobJSON(s.baseURL(r), st))
}

// jobFromPath is the job named by the path's jobId.
func (s *server) jobFromPath(r *http.Request) (jobs.Status, error) {
	if s.deps.Jobs == nil {
		return jobs.Status{}, problem(CodeUnavailable, "this server runs no job queue")
	}
	id, err := strconv.ParseInt(chi.URLParam(r, "jobId"), 10, 64)
	if err != nil || id < 1 {
		return jobs.Status{}, problem(CodeNotFound, "no job %q", chi.URLParam(r, "jobId"))
	}
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if errors.Is(err, jobs.ErrNotFound) {
		return jobs.Status{}, problem(CodeNotFound, "no job %d", id)
	}
	return st, err
}

func jobJSON(base string, st jobs.Status) map[string]any {
	out := map[string]any{
		"id": st.ID, "kind": st.Kind, "state": st.State, "attempt": st.Attempt, "max_attempts": st.MaxAttempt,
		"progress": st.Progress, "message": st.Message, "created_at": st.CreatedAt.UTC().Format(time.RFC3339Nano),
		"links": []link{{Href: fmt.Sprintf("%s/api/jobs/%d", base, st.ID), Rel: "self", Type: "application/json"}},
	}
	if st.StartedAt != nil {
		out["started_at"] = st.StartedAt.UTC().Format(time.RFC3339Nano)
	}
	if st.FinishedAt != nil {
		out["finished_at"] = st.FinishedAt.UTC().Format(time.RFC3339Nano)
	}
	if len(st.Result) > 0 {
		out["result"] = st.Result
	}
	if st.Kind == jobs.KindExport && st.State == jobs.StateSucceeded {
		out["links"] = append(out["links"].([]link), link{Href: fmt.Sprintf("%s/api/jobs/%d/result", base, st.ID), Rel: "enclosure", Title: "the exported file"})
	}
	if st.Kind == jobs.KindStatistics && st.State == jobs.StateSucceeded {
		out["links"] = append(out["links"].([]link), link{Href: fmt.Sprintf("%s/api/jobs/%d/result", base, st.ID), Rel: "enclosure", Type: "application/json", Title: "the statistics"})
	}
	if len(st.Errors) > 0 {
		out["errors"] = st.Errors
	}
	if st.Fault != nil {
		// The problem the same fault answers when met at once (faultProblem).
		out["problem"] = faultProblem(&fault.Error{Kind: st.Fault.Kind, Field: st.Fault.Field, Msg: st.Fault.Message})
	}
	return out
}

// geometryJSON is a GeoJSON MultiPolygon geometry object.
func geometryJSON(mp orb.MultiPolygon) map[string]any {
	if mp == nil {
		mp = orb.MultiPolygon{}
	}
	return map[string]any{"type": "MultiPolygon", "coordinates": mp}
}
