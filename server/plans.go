package server

import (
	"bytes"
	"encoding/json"
	"io"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/go-chi/chi/v5"

	"ridgeflank/store"
	"ridgeflank/survey"
)

// Media types of the printable report.
const MediaPDF = "application/pdf"

// ---- stored plans: the rules are the evaluate service's (CreatePlan … DeletePlan) ----

// listPlans answers {"plans":[Plan…]}, one page (limit, offset) in the order they were created.
func (s *server) listPlans(w http.ResponseWriter, r *http.Request) error {
	var page store.Page
	for _, q := range []struct {
		name string
		v    *int
	}{{"limit", &page.Limit}, {"offset", &page.Offset}} {
		if raw := queryOf(r).Get(q.name); raw != "" {
			n, err := strconv.Atoi(raw)
			if err != nil || n < 0 {
				return problem(CodeInvalidParameter, "%s=%q: want a whole number ≥ 0", q.name, raw).withParam(q.name)
			}
			*q.v = n
		}
	}
	ps, err := s.ev.ListPlans(r.Context(), page)
	if err != nil {
		return err
	}
	return writeJSON(w, http.StatusOK, "", map[string]any{"plans": ps})
}

// readPlan decodes a Plan body strictly (unknown fields are refused).
func readPlan(r *http.Request) (survey.Plan, error) {
	var p survey.Plan
	if err := decodeJSON(r, &p); err != nil {
		return survey.Plan{}, err
	}
	return p, nil
}

func (s *server) createPlan(w http.ResponseWriter, r *http.Request) error {
	p, err := readPlan(r)
	if err != nil {
		return err
	}
	out, err := s.ev.CreatePlan(r.Context(), p)
	if err != nil {
		return err
	}
	w.Header().Set("Location", s.baseURL(r)+"/api/plans/"+out.ID)
	w.Header().Set("ETag", etag(out.Version))
	return writeJSON(w, http.StatusCreated, "", out)
}

func (s *server) getPlan(w http.ResponseWriter, r *http.Request) error {
	p, err := s.ev.GetPlan(r.Context(), chi.URLParam(r, "planId"))
	if err != nil {
		return err
	}
	w.Header().Set("ETag", etag(p.Version))
	return writeJSON(w, http.StatusOK, "", p)
}

// updatePlan replaces a plan. If-Match with the version last read is required (428 without
// it, 412 when someone else wrote first; "*" means whatever the version is).
func (s *server) updatePlan(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "planId")
	cond, err := parseIfMatch(r)
	if err != nil {
		return err
	}
	if !cond.present {
		return problem(CodePreconditionNeeded, "send If-Match with the plan's ETag (its version) to update it")
	}
	p, err := readPlan(r)
	if err != nil {
		return err
	}
	if p.ID != "" && p.ID != id {
		return problem(CodeConflict, "the body's id %q differs from the path's %q", p.ID, id)
	}
	var out survey.Plan
	err = cond.write(func() (int64, error) {
		cur, err := s.ev.GetPlan(r.Context(), id)
		return cur.Version, err
	}, func(ver int64) error {
		q := p
		q.ID, q.Version = id, ver
		var err error
		out, err = s.ev.UpdatePlan(r.Context(), q)
		return err
	})
	if err != nil {
		return err
	}
	w.Header().Set("ETag", etag(out.Version))
	return writeJSON(w, http.StatusOK, "", out)
}

// deletePlan removes a plan; If-Match is required ("*": whatever the version).
func (s *server) deletePlan(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "planId")
	cond, err := parseIfMatch(r)
	if err != nil {
		return err
	}
	if !cond.present {
		return problem(CodePreconditionNeeded, "send If-Match with the plan's ETag (its version), or *, to delete it")
	}
	err = cond.write(func() (int64, error) {
		cur, err := s.ev.GetPlan(r.Context(), id)
		return cur.Version, err
	}, func(ver int64) error { return s.ev.DeletePlan(r.Context(), id, ver) })
	if err != nil {
		return err
	}
	w.WriteHeader(http.StatusNoContent)
	return nil
}

// ---- checking a plan ----

// checkFormat is a format of a check's answer: one of survey's encodings or the report.
type checkFormat struct {
	enc    survey.Format // "" for the report
	report string        // "pdf" or "png"
}

// checkFormatOf reads f= (json, csv, geojson, pdf, png; their media types are accepted too) or,
// without it, the Accept header; JSON is the default.
func checkFormatOf(r *http.Request) (checkFormat, error) {
	f := strings.ToLower(strings.TrimSpace(queryOf(r).Get("f")))
	if f == "" {
		acc := r.Header.Get("Accept")
		switch {
		case strings.Contains(acc, MediaGeoJSON):
			f = "geojson"
		case strings.Contains(acc, "text/csv"):
			f = "csv"
		case strings.Contains(acc, MediaPDF):
			f = "pdf"
		case strings.Contains(acc, MediaPNG):
			f = "png"
		default:
			f = "json"
		}
	}
	switch f {
	case "json", "application/json":
		return checkFormat{enc: survey.FormatJSON}, nil
	case "csv", "text/csv":
		return checkFormat{enc: survey.FormatCSV}, nil
	case "geojson", MediaGeoJSON:
		return checkFormat{enc: survey.FormatGeoJSON}, nil
	case "pdf", MediaPDF:
		return checkFormat{report: "pdf"}, nil
	case "png", MediaPNG:
		return checkFormat{report: "png"}, nil
	}
	return checkFormat{}, problem(CodeUnsupportedFormat, "f=%q: a plan check answers json, csv, geojson, pdf or png", queryOf(r).Get("f")).withParam("f")
}

// checkRequest is the body of POST /api/plans/check when it names a stored plan: its id and,
// optionally, settings overriding the stored ones field by field (a field the body leaves out
// keeps the stored value).
type checkRequest struct {
	ID       string          `json:"id"`
	Settings json.RawMessage `json:"settings,omitempty"`
}

// checkPlanPost checks the plan in the body, or the stored plan the body names by id.
func (s *server) checkPlanPost(w http.ResponseWriter, r *http.Request) error {
	cf, err := checkFormatOf(r)
	if err != nil {
		return err
	}
	ct := r.Header.Get("Content-Type")
	if ct != "" && !strings.Contains(ct, "json") {
		return problem(CodeUnsupportedMedia, "expected a JSON body, got Content-Type %q", ct)
	}
	raw, err := io.ReadAll(r.Body)
	if err != nil {
		return err // *http.MaxBytesError: 413
	}
	var keys map[string]json.RawMessage
	if err := json.Unmarshal(raw, &keys); err != nil {
		return problem(CodeBadRequest, "the JSON body could not be read: %v", err).withCause(err)
	}
	var p survey.Plan
	if _, hasLines := keys["lines"]; hasLines || keys["id"] == nil {
		if err := strictJSON(raw, &p); err != nil {
			return err
		}
	} else {
		var req checkRequest
		if err := strictJSON(raw, &req); err != nil {
			return problem(CodeBadRequest, "a body naming a stored plan holds only id and settings: %v", err).withCause(err)
		}
		if p, err = s.ev.GetPlan(r.Context(), req.ID); err != nil {
			return err
		}
		if len(req.Settings) > 0 {
			if err := strictJSON(req.Settings, &p.Settings); err != nil {
				return problem(CodeBadRequest, "settings: %v", err).withParam("settings").withCause(err)
			}
		}
	}
	return s.writeCheck(w, r, p, cf)
}

// checkStoredPlan checks the stored plan planId.
func (s *server) checkStoredPlan(w http.ResponseWriter, r *http.Request) error {
	cf, err := checkFormatOf(r)
	if err != nil {
		return err
	}
	p, err := s.ev.GetPlan(r.Context(), chi.URLParam(r, "planId"))
	if err != nil {
		return err
	}
	return s.writeCheck(w, r, p, cf)
}

// strictJSON decodes raw into v, refusing unknown fields and trailing data.
func strictJSON(raw []byte, v any) error {
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		return problem(CodeBadRequest, "the JSON body could not be read: %v", err).withCause(err)
	}
	if dec.More() {
		return problem(CodeBadRequest, "the JSON body has data after its value")
	}
	return nil
}

// writeCheck checks p (evaluate.Service.CheckPlan) and writes the answer in format cf through
// the encoders every door shares (survey.Write, evaluate.Service.PlanReport).
func (s *server) writeCheck(w http.ResponseWriter, r *http.Request, p survey.Plan, cf checkFormat) error {
	chk, err := s.ev.CheckPlan(r.Context(), p, nil)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	media := cf.enc.MediaType()
	if cf.report != "" {
		page := 1
		if v := queryOf(r).Get("page"); v != "" {
			if page, err = strconv.Atoi(v); err != nil || page < 1 {
				return problem(CodeInvalidParameter, "page=%q: want a page number from 1", v).withParam("page")
			}
		}
		if err := s.ev.PlanReport(r.Context(), &buf, chk, cf.report, page, time.Now()); err != nil {
			return err
		}
		media = MediaPDF
		if cf.report == "png" {
			media = MediaPNG
			buf = *bytes.NewBuffer(withPNGCaution(buf.Bytes(), chk.Caution))
		}
	} else if err := survey.Write(&buf, chk, cf.enc); err != nil {
		return err
	}
	w.Header().Set("Content-Type", media)
	w.Header().Set("Ridgeflank-Caution", chk.Caution)
	w.Header().Set("Cache-Control", "no-store")
	_, err = w.Write(buf.Bytes())
	return err
}
