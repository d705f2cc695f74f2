package server

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"mime"
	"net/http"
	"os"
	"path/filepath"
	"strings"

	"ridgeflank/fault"
	"ridgeflank/ingest"
	"ridgeflank/jobs"
	"ridgeflank/store"
)

// Limits of the non-file fields of a grid upload (the form has ten known fields, each a
// short text; common practice, no source). The file part is bounded by MaxUploadBytes only.
const (
	// maxFormFieldBytes bounds each non-file multipart field.
	maxFormFieldBytes = 4096
	// maxFormFields bounds the number of non-file fields.
	maxFormFields = 32
	// maxFormFieldsBytes bounds the non-file fields together (names and values).
	maxFormFieldsBytes = 64 << 10
)

// uploadGrid streams a multipart upload (field "file" plus fields kind and
// optional id, name, units, vertical (older name vertical_sense),
// registration, variable, licence) to the upload directory while hashing it,
// checks the fields as ingest.Request.Check does, then queues an import job
// and answers 202 with the job. The grid's id is in the job's result.
func (s *server) uploadGrid(w http.ResponseWriter, r *http.Request) error {
	if s.deps.Jobs == nil {
		return problem(CodeUnavailable, "this server runs no job queue, so it cannot import grids")
	}
	// A grid directory below its reserve takes no more grids: refused before any byte is
	// stored, and so is an upload that would take it below (when the body's length is known).
	if g, checked := s.gridSpace(); checked && g.err == nil && (g.low() || r.ContentLength > g.free-g.reserve) {
		p := problem(CodeInsufficientSpace, "%s; %s; nothing was stored", g, uploadNeed(r.ContentLength))
		p.Limit, p.LimitName = &g.reserve, "min_free_grid_bytes"
		return p
	}
	mt, _, err := mime.ParseMediaType(r.Header.Get("Content-Type"))
	if err != nil || mt != "multipart/form-data" {
		return problem(CodeUnsupportedMedia, "upload grids as multipart/form-data with a \"file\" part")
	}
	mr, err := r.MultipartReader()
	if err != nil {
		return problem(CodeBadRequest, "%v", err).withCause(err)
	}
	dir := s.deps.Config.UploadDir
	if dir == "" {
		dir = os.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	args := jobs.ImportArgs{}
	fields := map[string]string{}
	var tmpPath string
	nFields, fieldBytes := 0, 0
	defer func() {
		if tmpPath != "" {
			os.Remove(tmpPath) // only reached on failure: success clears tmpPath
		}
	}()
	for {
		part, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			var mbe *http.MaxBytesError
			if errors.As(err, &mbe) {
				return err
			}
			return problem(CodeBadRequest, "reading the multipart body: %v", err).withCause(err)
		}
		name := part.FormName()
		if name == "file" {
			if tmpPath != "" {
				return problem(CodeBadRequest, "send one \"file\" part")
			}
			f, err := os.CreateTemp(dir, "upload-*"+safeExt(part.FileName()))
			if err != nil {
				return store.NoSpace(err)
			}
			tmpPath = f.Name()
			h := sha256.New()
			src := &errReader{r: part}
			n, err := io.Copy(io.MultiWriter(f, h), src)
			if cerr := f.Close(); err == nil {
				err = cerr
			}
			if err != nil && src.err != nil {
				return badBodyRead(err) // the client's body, not our disk
			}
			if err != nil {
				return store.NoSpace(err) // a full upload directory answers 507
			}
			args.Path, args.Bytes, args.SHA256 = tmpPath, n, hex.EncodeToString(h.Sum(nil))
			args.Filename = filepath.Base(part.FileName())
			continue
		}
		if nFields++; nFields > maxFormFields {
			return limitProblem(http.StatusRequestEntityTooLarge, "max_form_fields", maxFormFields, "the form has more than %d fields besides \"file\"", maxFormFields)
		}
		v, err := io.ReadAll(io.LimitReader(part, maxFormFieldBytes+1))
		if err != nil {
			return badBodyRead(err)
		}
		if len(v) > maxFormFieldBytes {
			return limitProblem(http.StatusRequestEntityTooLarge, "max_form_field_bytes", maxFormFieldBytes, "form field %q is longer than %d bytes", name, maxFormFieldBytes)
		}
		if fieldBytes += len(name) + len(v); fieldBytes > maxFormFieldsBytes {
			return limitProblem(http.StatusRequestEntityTooLarge, "max_form_fields_bytes", maxFormFieldsBytes, "the form's fields besides \"file\" are longer than %d bytes together", maxFormFieldsBytes)
		}
		fields[name] = strings.TrimSpace(string(v))
	}
	if tmpPath == "" || args.Bytes == 0 {
		return problem(CodeBadRequest, "the upload has no (or an empty) \"file\" part")
	}
	args.GridID = fields["id"]
	args.Name = fields["name"]
	if args.Name == "" {
		args.Name = args.Filename
	}
	args.Quantity = fields["kind"]
	args.Units = fields["units"]
	args.Vertical = fields["vertical"]
	if old := fields["vertical_sense"]; old != "" {
		if args.Vertical != "" && args.Vertical != old {
			return problem(CodeInvalidParameter, "vertical %q and its older name vertical_sense %q disagree; send one", args.Vertical, old).withParam("vertical")
		}
		args.Vertical = old
	}
	args.Registration = fields["registration"]
	args.Variable = fields["variable"]
	args.Licence = fields["licence"]
	// The same checks as every way in, before queueing: a bad form answers at once.
	if err := uploadRequest(args).Check(); err != nil {
		return err
	}
	// With a grid store shared by several servers, the job may run on another one: the upload
	// goes there, and the job fetches it.
	var sharedName string
	if sf, ok := s.deps.Store.Blobs().(store.SharedFiles); ok {
		sharedName = "uploads/" + filepath.Base(tmpPath)
		if err := sf.PutFile(r.Context(), sharedName, tmpPath); err != nil {
			return err
		}
		os.Remove(tmpPath)
		tmpPath = ""
		args.Path = sharedRef + sharedName
		defer func() {
			if sharedName != "" { // only reached on failure
				_ = sf.RemoveFile(context.WithoutCancel(r.Context()), sharedName)
			}
		}()
	}
	id, err := s.deps.Jobs.EnqueueImport(r.Context(), args)
	if err != nil {
		return err
	}
	tmpPath, sharedName = "", "" // the job owns the file now
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if err != nil {
		return err
	}
	loc := fmt.Sprintf("%s/api/jobs/%d", s.baseURL(r), id)
	w.Header().Set("Location", loc)
	body := jobJSON(s.baseURL(r), st)
	body["upload_sha256"] = args.SHA256
	return writeJSON(w, http.StatusAccepted, "", body)
}

// sharedRef marks an ImportArgs.Path that names a file of the grid store's store.SharedFiles
// rather than a path on the server's disk.
const sharedRef = "shared:"

// uploadNeed says what an upload of n bytes (-1: unknown) needs.
func uploadNeed(n int64) string {
	if n < 0 {
		return "free space first"
	}
	return fmt.Sprintf("this upload needs %s more", mib(n))
}

func safeExt(name string) string {
	ext := strings.ToLower(filepath.Ext(name))
	for _, c := range ext[min(1, len(ext)):] {
		if !(c >= 'a' && c <= 'z' || c >= '0' && c <= '9') {
			return ""
		}
	}
	if len(ext) > 8 {
		return ""
	}
	return ext
}

// uploadRequest is the ingest request of an accepted upload (for the handler's checks and
// the job alike).
func uploadRequest(a jobs.ImportArgs) ingest.Request {
	vertical := a.Vertical
	if vertical == "" {
		vertical = a.VerticalSense
	}
	return ingest.Request{
		Path: a.Path, Variable: a.Variable, Kind: store.GridKind(a.Quantity), Units: a.Units,
		Vertical: vertical, Registration: a.Registration, ID: a.GridID, Name: a.Name, Licence: a.Licence,
		Provenance: fmt.Sprintf("uploaded file %s (sha256 %s, %d bytes)", a.Filename, a.SHA256, a.Bytes),
	}
}

// ImportWorker returns the job handler that imports an uploaded grid file into st through
// ingest.Import (the pipeline the command line and the demo installer use) and removes the
// upload. Bad input (a *fault.Error: unreadable file, bad units, contradicting vertical sense,
// implausible values, id conflict) fails the job for good with the fault recorded; other
// failures are retried.
func ImportWorker(st store.Store, log *slog.Logger) func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
	return ImportWorkerMaxCells(st, log, 0)
}

// ImportWorkerMaxCells is ImportWorker refusing files that declare more than maxCells cells
// (ingest.Request.MaxCells; 0: ingest.DefaultMaxImportCells), the serve --max-import-cells
// setting.
func ImportWorkerMaxCells(st store.Store, log *slog.Logger, maxCells int64) func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	return func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
		remove := func() { os.Remove(a.Path) }
		name, shared := strings.CutPrefix(a.Path, sharedRef)
		if shared {
			sf, ok := st.Blobs().(store.SharedFiles)
			if !ok {
				return nil, jobs.Permanent(fmt.Errorf("the upload %s is in a shared grid store this server does not use", name))
			}
			dir, err := os.MkdirTemp("", "ridgeflank-import-")
			if err != nil {
				return nil, err
			}
			defer os.RemoveAll(dir)
			a.Path = filepath.Join(dir, filepath.Base(name))
			if err := sf.GetFile(ctx, name, a.Path); err != nil {
				if errors.Is(err, store.ErrNotFound) {
					return nil, jobs.Permanent(fmt.Errorf("the uploaded file is gone: %w", err))
				}
				return nil, err
			}
			remove = func() {
				if err := sf.RemoveFile(context.WithoutCancel(ctx), name); err != nil {
					log.WarnContext(ctx, "removing an imported upload from the grid store", "name", name, "err", err)
				}
			}
		}
		req := uploadRequest(a)
		req.MaxCells = maxCells
		res, err := ingest.Import(ctx, st, req, progress)
		if err != nil {
			if _, ok := fault.As(err); ok {
				remove()
				return nil, jobs.Permanent(err)
			}
			if _, serr := os.Stat(a.Path); serr != nil {
				return nil, jobs.Permanent(fmt.Errorf("the uploaded file is gone: %w", serr))
			}
			return nil, err
		}
		remove()
		g := res.Grid
		log.InfoContext(ctx, "grid imported", "grid_id", g.ID, "created", res.Created, "cells", res.NX*res.NY)
		notes := res.Notes
		if notes == nil {
			notes = []string{}
		}
		return map[string]any{
			"grid_id": g.ID, "sha256": g.ContentHash, "created": res.Created, "nx": res.NX, "ny": res.NY,
			"kind": g.Kind, "units": g.Units, "vertical_sense": g.VerticalSense, "notes": notes,
		}, nil
	}
}

// errReader remembers the first read error of r, so a failed copy can be
// told apart: a broken request body (the client's fault, 400) from a failed
// write to disk (ours, 500).
type errReader struct {
	r   io.Reader
	err error
}

func (e *errReader) Read(p []byte) (int, error) {
	n, err := e.r.Read(p)
	if err != nil && err != io.EOF && e.err == nil {
		e.err = err
	}
	return n, err
}

// badBodyRead maps an error reading the request body to a 400 problem,
// except for a body over the size limit, which the error handler answers
// with 413.
func badBodyRead(err error) error {
	var mbe *http.MaxBytesError
	if errors.As(err, &mbe) {
		return err
	}
	return problem(CodeBadRequest, "reading the multipart body: %v", err).withCause(err)
}
