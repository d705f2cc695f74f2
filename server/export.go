package server

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"time"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/jobs"
	"ridgeflank/store"
)

// exportResult is recorded as the job's result.
type exportResult = evaluate.ExportResult

func (s *server) exportDir() string {
	if s.deps.Config.ExportDir != "" {
		return s.deps.Config.ExportDir
	}
	return filepath.Join(os.TempDir(), "ridgeflank-exports")
}

// queueExport answers a large COG/netCDF area query with 202 and a job whose arguments carry
// the evaluate request itself.
func (s *server) queueExport(w http.ResponseWriter, r *http.Request, req evaluate.ExportRequest) error {
	raw, err := json.Marshal(req)
	if err != nil {
		return err
	}
	var b [12]byte
	_, _ = rand.Read(b[:])
	ext := ".tif"
	if req.Format == evaluate.FormatNetCDF {
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

// ExportWorker returns the job handler for large area exports: it decodes the evaluate request
// the job carries and has the evaluate service (deps.Evaluate, or one built from deps) write
// the file to the job's path. Bad requests fail permanently.
func ExportWorker(deps Deps) func(ctx context.Context, a jobs.ExportArgs, progress jobs.Progress) (any, error) {
	ev := deps.Evaluate
	if ev == nil {
		ev = NewEvaluate(deps)
	}
	return func(ctx context.Context, a jobs.ExportArgs, progress jobs.Progress) (any, error) {
		var req evaluate.ExportRequest
		if err := json.Unmarshal(a.Request, &req); err != nil {
			return nil, jobs.Permanent(err)
		}
		out := a.Path
		sf, shared := deps.Store.Blobs().(store.SharedFiles)
		if shared {
			// Any server may be asked for the file: write it here, keep it in the grid store.
			dir, err := os.MkdirTemp("", "ridgeflank-export-")
			if err != nil {
				return nil, err
			}
			defer os.RemoveAll(dir)
			out = filepath.Join(dir, filepath.Base(a.Path))
		}
		res, err := ev.Export(ctx, req, out, func(f float64, msg string) { progress(f, msg) })
		if _, ok := fault.As(err); ok {
			return nil, jobs.Permanent(err)
		}
		if err != nil {
			return nil, err
		}
		if shared {
			if err := sf.PutFile(ctx, "exports/"+filepath.Base(a.Path), out); err != nil {
				return nil, err
			}
		}
		return res, nil
	}
}

// jobResult downloads the file of a succeeded export job, or the answer of a succeeded
// statistics job.
func (s *server) jobResult(w http.ResponseWriter, r *http.Request) error {
	st, err := s.jobFromPath(r)
	if err != nil {
		return err
	}
	id := st.ID
	if st.Kind == jobs.KindStatistics {
		if st.State != jobs.StateSucceeded {
			return problem(CodeConflict, "job %d is %s; its statistics are ready when the job has succeeded", id, st.State)
		}
		return writeJSON(w, http.StatusOK, "", st.Result)
	}
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
	var f io.ReadSeekCloser
	if sf, ok := s.deps.Store.Blobs().(store.SharedFiles); ok {
		f, err = sf.OpenFile(r.Context(), "exports/"+filepath.Base(args.Path))
	} else {
		f, err = os.Open(args.Path)
	}
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

// SweepShared removes export files older than ExportRetention, and uploads older than a week
// (their jobs have long failed), from a grid store shared by several servers; serve calls it
// at start-up. A grid directory has no such files (nothing to do).
func SweepShared(ctx context.Context, st store.Store) (removed int, err error) {
	sf, ok := st.Blobs().(store.SharedFiles)
	if !ok {
		return 0, nil
	}
	n, err := sf.SweepFiles(ctx, "exports", ExportRetention)
	if err != nil {
		return n, err
	}
	m, err := sf.SweepFiles(ctx, "uploads", 7*24*time.Hour)
	return n + m, err
}

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

// UploadSweepAge is how long an upload file no import job names is kept before a sweep removes
// it: a file being streamed is newer (its modification time follows the writes), and one whose
// job was just queued is named by it.
const UploadSweepAge = time.Hour

// SweepUploads removes the upload files ("upload-*") in dir that inUse does not hold and that
// were last modified at least minAge ago: uploads whose request or import died with its
// process. Files of queued, retrying or running imports are in inUse and kept.
func SweepUploads(dir string, inUse map[string]bool, minAge time.Duration) (removed int, err error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return 0, nil
	}
	if err != nil {
		return 0, err
	}
	// By file name: the names are random, and a job may have stored the directory otherwise
	// spelt (relative, or through a link).
	used := map[string]bool{}
	for p := range inUse {
		used[filepath.Base(p)] = true
	}
	for _, en := range entries {
		p := filepath.Join(dir, en.Name())
		if en.IsDir() || !strings.HasPrefix(en.Name(), "upload-") || used[en.Name()] {
			continue
		}
		info, err := en.Info()
		if err != nil || time.Since(info.ModTime()) < minAge {
			continue
		}
		if os.Remove(p) == nil {
			removed++
		}
	}
	return removed, nil
}
