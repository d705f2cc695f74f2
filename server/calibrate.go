package server

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/jobs"
)

// createCalibration checks a calibration request (evaluate.CheckCalibration: a bad one is
// answered at once) and queues it as a job, answering 202 with the job and its links.
func (s *server) createCalibration(w http.ResponseWriter, r *http.Request) error {
	var req evaluate.CalibrateRequest
	if err := decodeJSON(r, &req); err != nil {
		return err
	}
	req.DatasetID = chi.URLParam(r, "datasetId")
	if err := s.ev.CheckCalibration(r.Context(), req); err != nil {
		return err
	}
	if s.deps.Jobs == nil {
		return problem(CodeUnavailable, "this server runs no job queue; calibrate with the command line (ridgeflank calibrate)")
	}
	raw, err := json.Marshal(calibrationJob{Dataset: req.DatasetID, Request: req})
	if err != nil {
		return err
	}
	id, err := s.deps.Jobs.EnqueueCalibration(r.Context(), jobs.CalibrationArgs{Request: raw})
	if err != nil {
		return err
	}
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if err != nil {
		return err
	}
	base := s.baseURL(r)
	self := fmt.Sprintf("%s/api/collections/%s/calibrations/%d", base, req.DatasetID, id)
	w.Header().Set("Location", self)
	body := jobJSON(base, st)
	body["links"] = append(body["links"].([]link), calibrationLinks(self)...)
	body["message"] = fmt.Sprintf("the calibration runs as job %d; its result is at %s when the job has succeeded", id, self)
	return writeJSON(w, http.StatusAccepted, "", body)
}

func calibrationLinks(self string) []link {
	return []link{
		{Href: self, Rel: "alternate", Type: "application/json", Title: "the calibration (when the job has succeeded)"},
		{Href: self + "/plot.png", Rel: "related", Type: "image/png", Title: "depth against age"},
		{Href: self + "/plot.svg", Rel: "related", Type: "image/svg+xml", Title: "depth against age"},
	}
}

// calibrationJob is what a calibration job carries: the request with its dataset (the
// request's DatasetID is not in its JSON).
type calibrationJob struct {
	Dataset string                    `json:"dataset"`
	Request evaluate.CalibrateRequest `json:"request"`
}

// CalibrationWorker returns the job handler for calibrations: it runs evaluate's Calibrate
// (deps.Evaluate, or one built from deps) and answers the evaluate.Calibration. Bad requests
// fail permanently.
func CalibrationWorker(deps Deps) func(ctx context.Context, a jobs.CalibrationArgs, progress jobs.Progress) (any, error) {
	ev := deps.Evaluate
	if ev == nil {
		ev = NewEvaluate(deps)
	}
	return func(ctx context.Context, a jobs.CalibrationArgs, progress jobs.Progress) (any, error) {
		var cj calibrationJob
		if err := json.Unmarshal(a.Request, &cj); err != nil {
			return nil, jobs.Permanent(err)
		}
		cj.Request.DatasetID = cj.Dataset
		progress(0, "reading the region's cells")
		res, err := ev.Calibrate(ctx, cj.Request, func(f float64) {
			msg := "reading the region's cells"
			if f >= 0.5 {
				msg = "fitting and resampling"
			}
			progress(f, msg)
		})
		if _, ok := fault.As(err); ok {
			return nil, jobs.Permanent(err)
		}
		if err != nil {
			return nil, err
		}
		return res, nil
	}
}

// calibrationFromPath reads the result of the calibration job {jobId} of {datasetId}: 404 for
// another kind of job or dataset, 409 while it has not succeeded.
func (s *server) calibrationFromPath(r *http.Request) (*evaluate.Calibration, error) {
	st, err := s.jobFromPath(r)
	if err != nil {
		return nil, err
	}
	if st.Kind != jobs.KindCalibration {
		return nil, problem(CodeNotFound, "job %d is a %s job, not a calibration", st.ID, st.Kind)
	}
	var cj jobs.CalibrationArgs
	var req calibrationJob
	if err := json.Unmarshal(st.Args, &cj); err != nil {
		return nil, err
	}
	if err := json.Unmarshal(cj.Request, &req); err != nil {
		return nil, err
	}
	if req.Dataset != chi.URLParam(r, "datasetId") {
		return nil, problem(CodeNotFound, "calibration %d belongs to dataset %q", st.ID, req.Dataset)
	}
	if st.State != jobs.StateSucceeded {
		return nil, problem(CodeConflict, "calibration %d is %s (progress %.0f %%); its result is ready when the job has succeeded: see /api/jobs/%d", st.ID, st.State, 100*st.Progress, st.ID)
	}
	var c evaluate.Calibration
	if err := json.Unmarshal(st.Result, &c); err != nil {
		return nil, err
	}
	return &c, nil
}

// getCalibration answers a succeeded calibration as JSON, or its plot with f=png or f=svg.
func (s *server) getCalibration(w http.ResponseWriter, r *http.Request) error {
	f := strings.ToLower(queryOf(r).Get("f"))
	switch f {
	case "", "json", "application/json":
	case evaluate.PlotPNG, evaluate.PlotSVG:
		return s.calibrationPlot(f)(w, r)
	default:
		return problem(CodeUnsupportedFormat, "f=%q: a calibration answers json, png or svg", f).withParam("f")
	}
	c, err := s.calibrationFromPath(r)
	if err != nil {
		return err
	}
	self := s.baseURL(r) + r.URL.Path
	out := struct {
		*evaluate.Calibration
		Links []link `json:"links"`
	}{c, calibrationLinks(strings.TrimSuffix(self, "/"))}
	w.Header().Set("Ridgeflank-Caution", Caution)
	return writeJSON(w, http.StatusOK, "", out)
}

// calibrationPlot draws a succeeded calibration's depth–age figure in format.
func (s *server) calibrationPlot(format string) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		c, err := s.calibrationFromPath(r)
		if err != nil {
			return err
		}
		b, err := c.Plot(format)
		if err != nil {
			return err
		}
		w.Header().Set("Content-Type", evaluate.PlotContentType(format))
		w.Header().Set("Ridgeflank-Caution", Caution)
		_, err = w.Write(b)
		return err
	}
}
