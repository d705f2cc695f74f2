package server

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"time"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/jobs"
)

// exportRequest is what an export job needs to recompute an area answer:
// the collection and the original query string.
type exportRequest struct {
	Dataset string `json:"dataset"`
	Query   string `json:"query"`
}

// exportResult is recorded as the job's result.
type exportResult struct {
	Filename  string `json:"filename"`
	MediaType string `json:"media_type"`
	Bytes     int64  `json:"bytes"`
	SHA256    string `json:"sha256"`
}

func (s *server) exportDir() string {
	if s.deps.Config.ExportDir != "" {
		return s.deps.Config.ExportDir
	}
	return filepath.Join(os.TempDir(), "ridgeflank-exports")
}

// queueExport answers a large COG/netCDF area query with 202 and a job.
func (s *server) queueExport(w http.ResponseWriter, r *http.Request, d *dataset, format outFormat) error {
	raw, _ := json.Marshal(exportRequest{Dataset: d.Row.ID, Query: r.URL.RawQuery})
	var b [12]byte
	_, _ = rand.Read(b[:])
	ext := ".tif"
	if format == fmtNetCDF {
		ext = ".nc"
	}
	path := filepath.Join(s.exportDir(), "export-"+hex.EncodeToString(b[:])+ext)
	id, err := s.deps.Jobs.EnqueueExport(r.Context(), jobs.ExportArgs{Request: raw, Path: path})
	if err != nil {
		return err
	}
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if err != nil {
		return err
	}
	w.Header().Set("Location", fmt.Sprintf("%s/api/jobs/%d", s.baseURL(r), id))
	body := jobJSON(s.baseURL(r), st)
	body["message"] = fmt.Sprintf("the answer is larger than %d cells, so it is prepared as a job; fetch /api/jobs/%d/result when the job has succeeded", s.limits.SyncExportCells, id)
	return writeJSON(w, http.StatusAccepted, "", body)
}

// ExportWorker returns the job handler for large area exports: it replays
// the stored query against the store (through the same code as the HTTP
// answer) and writes the file to the job's path.
func ExportWorker(deps Deps) func(ctx context.Context, a jobs.ExportArgs, progress jobs.Progress) (any, error) {
	s := newServer(deps)
	return func(ctx context.Context, a jobs.ExportArgs, progress jobs.Progress) (any, error) {
		var req exportRequest
		if err := json.Unmarshal(a.Request, &req); err != nil {
			return nil, jobs.Permanent(err)
		}
		r, err := http.NewRequestWithContext(ctx, "GET", "/?"+req.Query, nil)
		if err != nil {
			return nil, jobs.Permanent(err)
		}
		progress(0.05, "loading dataset "+req.Dataset)
		d, err := s.loadDataset(ctx, req.Dataset)
		if err != nil {
			return nil, permanentIfProblem(err)
		}
		g, err := parseCoords(r)
		if err != nil {
			return nil, jobs.Permanent(err)
		}
		mp, ok := asMultiPolygon(g)
		if !ok {
			return nil, jobs.Permanent(errors.New("export needs a polygon"))
		}
		norm, err := geo.NormalizeRegion(mp, s.limits.MaxVertices)
		if err != nil {
			return nil, jobs.Permanent(err)
		}
		resX, _ := parseResolution(r, "resolution-x")
		resY, _ := parseResolution(r, "resolution-y")
		format, _, err := negotiate(r, fmtCOG, fmtNetCDF)
		if err != nil {
			return nil, jobs.Permanent(err)
		}
		o, err := s.parseQueryOpts(r, d)
		if err != nil {
			return nil, permanentIfProblem(err)
		}
		progress(0.2, "computing")
		res, err := s.computeArea(ctx, d, o, norm, mp.Bound(), resX, resY)
		if err != nil {
			return nil, permanentIfProblem(err)
		}
		progress(0.7, "encoding")
		prov := s.provenanceFor(d, o)
		p := o.Params[0]
		meta := gdal.Meta{Name: p.ID, LongName: p.Label, Units: p.Unit, Title: d.Row.Name + ": " + p.Label,
			Source: "ridgeflank " + s.deps.Version, Metadata: prov.metadata()}
		if err := os.MkdirAll(filepath.Dir(a.Path), 0o755); err != nil {
			return nil, err
		}
		tmp := a.Path + ".tmp"
		media := MediaCOG
		if format == fmtNetCDF {
			media = MediaNetCDF
			err = gdal.WriteNetCDF(tmp, res.grids[0], meta)
		} else {
			err = gdal.WriteCOG(tmp, res.grids[0], meta)
		}
		if err != nil {
			os.Remove(tmp)
			return nil, err
		}
		if err := os.Rename(tmp, a.Path); err != nil {
			return nil, err
		}
		raw, err := os.ReadFile(a.Path)
		if err != nil {
			return nil, err
		}
		sum := sha256.Sum256(raw)
		return exportResult{Filename: req.Dataset + "-area-" + p.ID + filepath.Ext(a.Path), MediaType: media,
			Bytes: int64(len(raw)), SHA256: hex.EncodeToString(sum[:])}, nil
	}
}

func permanentIfProblem(err error) error {
	var p *Problem
	if errors.As(err, &p) && p.Status < 500 {
		return jobs.Permanent(err)
	}
	return err
}

// jobResult downloads the file of a succeeded export job.
func (s *server) jobResult(w http.ResponseWriter, r *http.Request) error {
	st, err := s.jobFromPath(r)
	if err != nil {
		return err
	}
	id := st.ID
	if st.Kind != jobs.KindExport {
		return problem(CodeNotFound, "job %d is a %s job and has no file to download", id, st.Kind)
	}
	if st.State != jobs.StateSucceeded {
		return problem(CodeConflict, "job %d is %s; its file is ready when the job has succeeded", id, st.State)
	}
	var args jobs.ExportArgs
	var res exportResult
	if err := json.Unmarshal(st.Args, &args); err != nil {
		return err
	}
	if err := json.Unmarshal(st.Result, &res); err != nil {
		return err
	}
	f, err := os.Open(args.Path)
	if err != nil {
		return problem(CodeNotFound, "the file of job %d is no longer kept", id)
	}
	defer f.Close()
	w.Header().Set("Content-Type", res.MediaType)
	w.Header().Set("Content-Disposition", `attachment; filename="`+url.PathEscape(res.Filename)+`"`)
	w.Header().Set("ETag", `"`+res.SHA256+`"`)
	var mod time.Time
	if st.FinishedAt != nil {
		mod = *st.FinishedAt
	}
	http.ServeContent(w, r, "", mod, f)
	return nil
}

// ExportRetention is how long export files are kept (River forgets
// completed jobs after 24 hours, after which nobody can ask for the file).
const ExportRetention = 48 * time.Hour

// SweepExports removes export files older than ExportRetention from dir
// (Config.ExportDir); serve calls it at start-up.
func SweepExports(dir string) (removed int, err error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return 0, nil
	}
	if err != nil {
		return 0, err
	}
	for _, en := range entries {
		if en.IsDir() || !strings.HasPrefix(en.Name(), "export-") {
			continue
		}
		info, err := en.Info()
		if err != nil || time.Since(info.ModTime()) < ExportRetention {
			continue
		}
		if os.Remove(filepath.Join(dir, en.Name())) == nil {
			removed++
		}
	}
	return removed, nil
}
