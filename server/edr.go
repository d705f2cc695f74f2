package server

import (
	"encoding/json"
	"net/http"

	"github.com/go-chi/chi/v5"

	"ridgeflank/colour"
)

// Media types.
const (
	MediaCovJSON    = "application/vnd.cov+json"
	MediaCovJSONOld = "application/prs.coverage+json"
	MediaGeoJSON    = "application/geo+json"
	MediaCSV        = "text/csv"
	MediaCOG        = "image/tiff; application=geotiff; profile=cloud-optimized"
	MediaNetCDF     = "application/x-netcdf"
	MediaPNG        = "image/png"
	MediaOpenAPI    = "application/vnd.oai.openapi+json;version=3.1"
)

// ConformanceClasses are the OGC API conformance classes we implement.
var ConformanceClasses = []string{
	"http://www.opengis.net/spec/ogcapi-common-1/1.0/conf/core",
	"http://www.opengis.net/spec/ogcapi-common-2/1.0/conf/collections",
	"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/core",
	"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/collections",
	"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/queries",
	"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/covjson",
	"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/geojson",
}

func (s *server) landing(w http.ResponseWriter, r *http.Request) error {
	b := s.baseURL(r)
	return writeJSON(w, http.StatusOK, "", map[string]any{
		"title":       "ridgeflank",
		"description": "Seafloor depth, heat flow and lithosphere thickness predicted from seafloor age with published cooling models, and residual depth over stored grids. Predicted depths are model estimates, not for navigation.",
		"version":     s.deps.Version,
		"links": []link{
			{Href: b + "/api", Rel: "self", Type: "application/json", Title: "this document"},
			{Href: b + "/api/openapi.json", Rel: "service-desc", Type: MediaOpenAPI, Title: "OpenAPI 3.1 description"},
			{Href: b + "/api/conformance", Rel: "conformance", Type: "application/json", Title: "conformance classes"},
			{Href: b + "/api/collections", Rel: "data", Type: "application/json", Title: "datasets as EDR collections"},
			{Href: b + "/api/models", Rel: "related", Type: "application/json", Title: "cooling models"},
			{Href: b + "/api/colour-scales", Rel: "related", Type: "application/json", Title: "colour scales of maps and tiles"},
		},
	})
}

func (s *server) conformance(w http.ResponseWriter, r *http.Request) error {
	return writeJSON(w, http.StatusOK, "", map[string]any{"conformsTo": ConformanceClasses})
}

func (s *server) problems(w http.ResponseWriter, r *http.Request) error {
	return writeJSON(w, http.StatusOK, "", map[string]any{"problems": problemCatalogue()})
}

func (s *server) problemDoc(w http.ResponseWriter, r *http.Request) error {
	k, ok := problemKinds[chi.URLParam(r, "code")]
	if !ok {
		return problem(CodeNotFound, "no problem type %q", chi.URLParam(r, "code"))
	}
	return writeJSON(w, http.StatusOK, "", k)
}

func (s *server) colourScales(w http.ResponseWriter, r *http.Request) error {
	w.Header().Set("Cache-Control", "public, max-age=3600")
	return writeJSON(w, http.StatusOK, "", colour.NewDocument())
}

func (s *server) openAPI(w http.ResponseWriter, r *http.Request) error {
	w.Header().Set("Content-Type", MediaOpenAPI)
	w.Header().Set("Cache-Control", "public, max-age=300")
	_, err := w.Write(openAPIDocument)
	return err
}

func (s *server) healthz(w http.ResponseWriter, r *http.Request) error {
	return writeJSON(w, http.StatusOK, "", map[string]string{"status": "ok", "version": s.deps.Version})
}

func (s *server) readyz(w http.ResponseWriter, r *http.Request) error {
	ok, checks := s.readyState(r.Context())
	status := "ready"
	if !ok {
		status = "not ready"
	}
	code := http.StatusOK
	if status != "ready" {
		code = http.StatusServiceUnavailable
	}
	raw, _ := json.Marshal(map[string]any{"status": status, "checks": checks})
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(code)
	_, err := w.Write(append(raw, '\n'))
	return err
}
