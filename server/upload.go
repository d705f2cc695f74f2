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

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/jobs"
	"ridgeflank/store"
)

// maxFormFieldBytes bounds each non-file multipart field.
const maxFormFieldBytes = 4096

// uploadGrid streams a multipart upload (field "file" plus optional fields
// id, name, kind, vertical_sense, variable) to the upload directory while
// hashing it, then queues an import job and answers 202 with the job.
func (s *server) uploadGrid(w http.ResponseWriter, r *http.Request) error {
	if s.deps.Jobs == nil {
		return problem(CodeUnavailable, "this server runs no job queue, so it cannot import grids")
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
				return err
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
				return err
			}
			args.Path, args.Bytes, args.SHA256 = tmpPath, n, hex.EncodeToString(h.Sum(nil))
			args.Filename = filepath.Base(part.FileName())
			continue
		}
		v, err := io.ReadAll(io.LimitReader(part, maxFormFieldBytes+1))
		if err != nil {
			return badBodyRead(err)
		}
		if len(v) > maxFormFieldBytes {
			return limitProblem(http.StatusRequestEntityTooLarge, "max_form_field_bytes", maxFormFieldBytes, "form field %q is longer than %d bytes", name, maxFormFieldBytes)
		}
		fields[name] = strings.TrimSpace(string(v))
	}
	if tmpPath == "" || args.Bytes == 0 {
		return problem(CodeBadRequest, "the upload has no (or an empty) \"file\" part")
	}
	args.GridID = fields["id"]
	if args.GridID == "" {
		args.GridID = store.NewID(store.PrefixGrid)
	} else if !validID(args.GridID) {
		return problem(CodeInvalidParameter, "id %q must be 1 to 64 characters from a-z, 0-9, '-' and '_'", args.GridID).withParam("id")
	}
	if _, err := s.deps.Store.GetGrid(r.Context(), args.GridID); err == nil {
		return problem(CodeConflict, "a grid with id %q already exists", args.GridID)
	}
	args.Name = fields["name"]
	if args.Name == "" {
		args.Name = args.Filename
	}
	args.Quantity = fields["kind"]
	if _, err := parseKind(args.Quantity); err != nil {
		return err
	}
	args.VerticalSense = fields["vertical_sense"]
	args.Variable = fields["variable"]
	id, err := s.deps.Jobs.EnqueueImport(r.Context(), args)
	if err != nil {
		return err
	}
	tmpPath = "" // the job owns the file now
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if err != nil {
		return err
	}
	loc := fmt.Sprintf("%s/api/jobs/%d", s.baseURL(r), id)
	w.Header().Set("Location", loc)
	body := jobJSON(s.baseURL(r), st)
	body["grid_id"] = args.GridID
	body["upload_sha256"] = args.SHA256
	return writeJSON(w, http.StatusAccepted, "", body)
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

func parseKind(k string) (store.GridKind, error) {
	if k == "" {
		return "", problem(CodeInvalidParameter, "the form field kind is required (age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other)").withParam("kind")
	}
	for _, v := range store.GridKinds() {
		if string(v) == k {
			return v, nil
		}
	}
	return "", problem(CodeInvalidParameter, "kind %q: choose age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other", k).withParam("kind")
}

// ImportWorker returns the job handler that imports an uploaded grid file
// into st: read it with GDAL, store it as a COG with its catalogue row, and
// remove the upload. Files GDAL cannot read fail permanently (no retry).
func ImportWorker(st store.Store, log *slog.Logger) func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	return func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
		if g, err := st.GetGrid(ctx, a.GridID); err == nil {
			// Imported by an earlier attempt that died before finishing.
			os.Remove(a.Path)
			return map[string]any{"grid_id": g.ID, "sha256": g.ContentHash, "created": false}, nil
		}
		// fail gives up for good: no retry will fix the file, so it goes.
		fail := func(err error) (any, error) {
			os.Remove(a.Path)
			return nil, jobs.Permanent(err)
		}
		kind, err := parseKind(a.Quantity)
		if err != nil {
			return fail(err)
		}
		progress(0.05, "reading "+a.Filename)
		g, meta, err := gdal.Read(a.Path, gdal.ReadOptions{Variable: a.Variable})
		if err != nil {
			if _, serr := os.Stat(a.Path); serr != nil {
				return nil, jobs.Permanent(fmt.Errorf("the uploaded file is gone: %w", serr))
			}
			return fail(fmt.Errorf("%s is not a readable grid: %w", a.Filename, err))
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		progress(0.4, "checking")
		sense := store.VerticalNone
		if kind == store.KindDepth || kind == store.KindElevation {
			vs := meta.Sense
			switch a.VerticalSense {
			case "depth", string(store.DepthPositiveDown):
				vs = geo.DepthPositiveDown
			case "elevation", string(store.ElevationPositiveUp):
				vs = geo.ElevationPositiveUp
			}
			if vs == geo.SenseUnknown {
				if kind == store.KindElevation {
					vs = geo.ElevationPositiveUp
				} else {
					vs = geo.DepthPositiveDown
				}
			}
			if vs == geo.ElevationPositiveUp {
				sense = store.ElevationPositiveUp
			} else {
				sense = store.DepthPositiveDown
			}
		}
		b := g.Bounds()
		ring := orb.Ring{{b.Min[0], b.Min[1]}, {b.Max[0], b.Min[1]}, {b.Max[0], b.Max[1]}, {b.Min[0], b.Max[1]}, {b.Min[0], b.Min[1]}}
		reg := store.CellCentre
		if g.Registration == geo.Node {
			reg = store.Node
		}
		row := store.Grid{
			ID: a.GridID, Name: a.Name, Kind: kind, Units: meta.Units, VerticalSense: sense,
			Footprint: orb.MultiPolygon{{ring}}, ResolutionDeg: g.DX, Registration: reg,
			Provenance: fmt.Sprintf("uploaded file %s (sha256 %s, %d bytes, %s driver)", a.Filename, a.SHA256, a.Bytes, meta.Driver),
		}
		progress(0.5, "writing cloud-optimized GeoTIFF")
		got, created, err := st.ImportGrid(ctx, row, func(tmp string) error { return gdal.WriteCOG(tmp, g, meta) })
		if err != nil {
			if errors.Is(err, store.ErrInvalid) {
				return fail(err)
			}
			return nil, err
		}
		os.Remove(a.Path)
		log.InfoContext(ctx, "grid imported", "grid_id", got.ID, "created", created, "cells", len(g.Data))
		return map[string]any{"grid_id": got.ID, "sha256": got.ContentHash, "created": created, "nx": g.NX, "ny": g.NY}, nil
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
