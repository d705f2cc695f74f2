package store

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// Blobs stores grid files under content-addressed keys. GridFiles keeps them in a local
// directory; store/s3blob keeps them in an S3-compatible bucket, where Path returns a GDAL
// virtual path (/vsis3/bucket/prefix/key) that GDAL reads with HTTP range requests.
// storetest.RunBlobs is the contract every implementation passes.
type Blobs interface {
	// Hold takes a shared lease that keeps Sweep from removing anything until release is
	// called. Hold it from before Put until the catalogue row is committed.
	Hold(ctx context.Context) (release func(), err error)
	// Put stores a file written by write at the temporary path it is given. The file is
	// fsynced, hashed (SHA-256) and renamed to its key; the directory is fsynced. If sha256Hex is
	// set and a blob with that hash exists, write is not called; if the written file's hash
	// differs from sha256Hex, Put fails with ErrInvalid. If write fails, nothing is left behind;
	// a full file system (ENOSPC, EDQUOT) is ErrInsufficientStorage.
	Put(ctx context.Context, sha256Hex string, write func(tmpPath string) error) (BlobInfo, error)
	// Open opens a blob for reading (ErrNotFound if absent).
	Open(ctx context.Context, key string) (io.ReadSeekCloser, error)
	// Path returns a path GDAL can open for the blob.
	Path(key string) (string, error)
	// Delete removes a blob; deleting an absent blob is not an error.
	Delete(ctx context.Context, key string) error
	// List returns the keys of the stored blobs in ascending order (temporary files and
	// the store's own bookkeeping are not listed).
	List(ctx context.Context) ([]string, error)
	// Sweep removes temporary files and blobs whose keys are not in the set returned by
	// referenced, unless a lease is held (then it returns nil, nil and removes nothing).
	// catalogueID names the catalogue the blobs belong to: a store records it on first sweep
	// and refuses (ErrConflict) to sweep for another catalogue, so that a database pointed at a
	// grid directory it does not own never deletes another catalogue's files.
	Sweep(ctx context.Context, catalogueID string, referenced func(ctx context.Context) (map[string]bool, error)) (removed []string, err error)
}

// BlobInfo describes a stored blob.
type BlobInfo struct {
	Key       string // file name, "<sha256 hex><ext>"
	SHA256    string // lower-case hex
	SizeBytes int64
	Existed   bool // the blob was already present (nothing new was stored)
}

// GridFiles is the directory implementation of Blobs. Files are named "<sha256 hex>.tif";
// temporary files start with ".tmp-"; the lock file is ".lock" and the owning catalogue's id
// is kept in ".catalogue". Other files are never touched.
//
// Leases and sweeps coordinate through flock(2) on the lock file, so they exclude each other
// across processes on one host (on network file systems without flock support, run one
// process per directory).
type GridFiles struct {
	dir string
	ext string
}

const (
	tmpPrefix      = ".tmp-"
	lockName       = ".lock"
	catalogueName  = ".catalogue"
	gridFileExt    = ".tif"
	holdRetryDelay = 10 * time.Millisecond
)

// NewGridFiles creates (if needed) and returns the grid directory dir.
func NewGridFiles(dir string) (*GridFiles, error) {
	if dir == "" {
		return nil, fmt.Errorf("%w: grid directory not set", ErrInvalid)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("grid directory: %w", err)
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, fmt.Errorf("grid directory: %w", err)
	}
	return &GridFiles{dir: abs, ext: gridFileExt}, nil
}

// Dir returns the absolute directory path.
func (g *GridFiles) Dir() string { return g.dir }

// IsKey reports whether name is a well-formed blob key of this store.
func (g *GridFiles) IsKey(name string) bool {
	return strings.HasSuffix(name, g.ext) && IsSHA256Hex(strings.TrimSuffix(name, g.ext))
}

func (g *GridFiles) keyPath(key string) (string, error) {
	if !g.IsKey(key) {
		return "", fmt.Errorf("%w: grid file key %q", ErrInvalid, key)
	}
	return filepath.Join(g.dir, key), nil
}

// Hold implements Blobs.
func (g *GridFiles) Hold(ctx context.Context) (func(), error) {
	for {
		l, ok, err := tryLock(filepath.Join(g.dir, lockName), false)
		if err != nil {
			return nil, fmt.Errorf("grid directory lock: %w", err)
		}
		if ok {
			var done bool
			return func() {
				if !done {
					done = true
					l.unlock()
				}
			}, nil
		}
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-time.After(holdRetryDelay):
		}
	}
}

// Put implements Blobs.
func (g *GridFiles) Put(ctx context.Context, sha256Hex string, write func(tmpPath string) error) (BlobInfo, error) {
	if sha256Hex != "" {
		if !IsSHA256Hex(sha256Hex) {
			return BlobInfo{}, fmt.Errorf("%w: content hash must be 64 lower-case hex digits", ErrInvalid)
		}
		key := sha256Hex + g.ext
		if fi, err := os.Stat(filepath.Join(g.dir, key)); err == nil && fi.Mode().IsRegular() {
			return BlobInfo{Key: key, SHA256: sha256Hex, SizeBytes: fi.Size(), Existed: true}, nil
		}
	}
	if err := ctx.Err(); err != nil {
		return BlobInfo{}, err
	}
	tmp := filepath.Join(g.dir, tmpPrefix+NewID("")+g.ext)
	cleanup := func() {
		os.Remove(tmp)
		// Writers such as GDAL may leave side files (tmp.aux.xml).
		if side, _ := filepath.Glob(tmp + ".*"); len(side) > 0 {
			for _, s := range side {
				os.Remove(s)
			}
		}
	}
	if err := write(tmp); err != nil {
		cleanup()
		return BlobInfo{}, fmt.Errorf("writing grid file: %w", NoSpace(err))
	}
	sum, size, err := syncAndHash(tmp)
	if err != nil {
		cleanup()
		return BlobInfo{}, fmt.Errorf("grid file: %w", NoSpace(err))
	}
	if sha256Hex != "" && sum != sha256Hex {
		cleanup()
		return BlobInfo{}, fmt.Errorf("%w: written grid file has SHA-256 %s, expected %s", ErrInvalid, sum, sha256Hex)
	}
	if err := ctx.Err(); err != nil {
		cleanup()
		return BlobInfo{}, err
	}
	key := sum + g.ext
	final := filepath.Join(g.dir, key)
	info := BlobInfo{Key: key, SHA256: sum, SizeBytes: size}
	if fi, err := os.Stat(final); err == nil && fi.Mode().IsRegular() {
		cleanup()
		info.Existed = true
		return info, nil
	}
	if err := os.Rename(tmp, final); err != nil {
		cleanup()
		return BlobInfo{}, fmt.Errorf("grid file: %w", NoSpace(err))
	}
	cleanup() // side files only; tmp itself is gone
	if err := syncDir(g.dir); err != nil {
		return BlobInfo{}, fmt.Errorf("grid directory: %w", err)
	}
	return info, nil
}

// syncAndHash fsyncs the file and returns its SHA-256 and size.
func syncAndHash(path string) (string, int64, error) {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return "", 0, fmt.Errorf("%w: the writer created no file", ErrInvalid)
		}
		return "", 0, err
	}
	defer f.Close()
	if err := f.Sync(); err != nil {
		return "", 0, err
	}
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return "", 0, err
	}
	if err := f.Close(); err != nil {
		return "", 0, err
	}
	return hex.EncodeToString(h.Sum(nil)), n, nil
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return d.Sync()
}

// Open implements Blobs.
func (g *GridFiles) Open(ctx context.Context, key string) (io.ReadSeekCloser, error) {
	p, err := g.keyPath(key)
	if err != nil {
		return nil, err
	}
	f, err := os.Open(p)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("grid file %s: %w", key, ErrNotFound)
	}
	return f, err
}

// Path implements Blobs.
func (g *GridFiles) Path(key string) (string, error) { return g.keyPath(key) }

// Delete implements Blobs.
func (g *GridFiles) Delete(ctx context.Context, key string) error {
	p, err := g.keyPath(key)
	if err != nil {
		return err
	}
	if err := os.Remove(p); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	return syncDir(g.dir)
}

// List implements Blobs.
func (g *GridFiles) List(ctx context.Context) ([]string, error) {
	entries, err := os.ReadDir(g.dir)
	if err != nil {
		return nil, err
	}
	var keys []string
	for _, e := range entries {
		if g.IsKey(e.Name()) && e.Type().IsRegular() {
			keys = append(keys, e.Name())
		}
	}
	return keys, nil // os.ReadDir sorts by name
}

// Sweep implements Blobs.
func (g *GridFiles) Sweep(ctx context.Context, catalogueID string, referenced func(ctx context.Context) (map[string]bool, error)) ([]string, error) {
	l, ok, err := tryLock(filepath.Join(g.dir, lockName), true)
	if err != nil {
		return nil, fmt.Errorf("grid directory lock: %w", err)
	}
	if !ok {
		return nil, nil // an import is in progress; the next sweep will catch up
	}
	defer l.unlock()
	entries, err := os.ReadDir(g.dir)
	if err != nil {
		return nil, err
	}
	if err := g.claim(catalogueID, entries); err != nil {
		return nil, err
	}
	var removed []string
	var keys []string
	for _, e := range entries {
		name := e.Name()
		// The temporary names writers make of a temporary file (geo/gdal's atomic write:
		// "..tmp-x.tif.tmp-PID-N.tif") and GDAL's side files of a COG being written
		// (name.ovr.tmp, name.msk.ovr.tmp) go too: the lock says no import is writing.
		if (strings.HasPrefix(name, tmpPrefix) || strings.HasPrefix(name, "."+tmpPrefix) || strings.HasSuffix(name, ".ovr.tmp")) && e.Type().IsRegular() {
			if err := os.Remove(filepath.Join(g.dir, name)); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return removed, err
			}
			removed = append(removed, name)
		} else if g.IsKey(name) && e.Type().IsRegular() {
			keys = append(keys, name)
		}
	}
	if len(keys) > 0 {
		ref, err := referenced(ctx)
		if err != nil {
			return removed, fmt.Errorf("sweep: reading the catalogue: %w", err)
		}
		for _, k := range keys {
			if ref[k] {
				continue
			}
			if err := os.Remove(filepath.Join(g.dir, k)); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return removed, err
			}
			removed = append(removed, k)
		}
	}
	if len(removed) > 0 {
		if err := syncDir(g.dir); err != nil {
			return removed, err
		}
	}
	return removed, nil
}

// claim checks (and on first use records) which catalogue owns the directory.
func (g *GridFiles) claim(catalogueID string, entries []fs.DirEntry) error {
	if catalogueID == "" {
		return fmt.Errorf("%w: sweep needs the catalogue id", ErrInvalid)
	}
	p := filepath.Join(g.dir, catalogueName)
	b, err := os.ReadFile(p)
	if err == nil {
		if got := strings.TrimSpace(string(b)); got != catalogueID {
			return fmt.Errorf("%w: grid directory %s belongs to catalogue %s, not %s; not sweeping", ErrConflict, g.dir, got, catalogueID)
		}
		return nil
	}
	if !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	for _, e := range entries {
		if g.IsKey(e.Name()) {
			return fmt.Errorf("%w: grid directory %s holds grid files but no %s marker; not sweeping (write the catalogue id %s into it to adopt the directory)", ErrConflict, g.dir, catalogueName, catalogueID)
		}
	}
	tmp := filepath.Join(g.dir, tmpPrefix+"catalogue")
	if err := os.WriteFile(tmp, []byte(catalogueID+"\n"), 0o644); err != nil {
		return err
	}
	if _, _, err := syncAndHash(tmp); err != nil {
		return err
	}
	if err := os.Rename(tmp, p); err != nil {
		return err
	}
	return syncDir(g.dir)
}

// CopyFile returns a write callback for ImportGrid/Put that copies the ready file src.
func CopyFile(src string) func(tmpPath string) error {
	return func(tmpPath string) error {
		in, err := os.Open(src)
		if err != nil {
			return err
		}
		defer in.Close()
		out, err := os.OpenFile(tmpPath, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		if err != nil {
			return err
		}
		if _, err := io.Copy(out, in); err != nil {
			out.Close()
			return err
		}
		return out.Close()
	}
}

// SharedFiles is implemented by grid stores that several servers share (store/s3blob): a file
// one server receives and another's job worker reads (an upload), or one server's job writes
// and any server sends (an export), is kept there under a name such as "uploads/x.tif". Names
// are one folder ("uploads" or "exports") and a file name of letters, digits, '.', '-' and
// '_'. A store without it (the grid directory) keeps such files on the server's own disk.
type SharedFiles interface {
	// PutFile copies the local file src to name.
	PutFile(ctx context.Context, name, src string) error
	// GetFile copies name to the local path dst (ErrNotFound if absent).
	GetFile(ctx context.Context, name, dst string) error
	// OpenFile opens name for reading (ErrNotFound if absent).
	OpenFile(ctx context.Context, name string) (io.ReadSeekCloser, error)
	// RemoveFile removes name; removing an absent file is not an error.
	RemoveFile(ctx context.Context, name string) error
	// SweepFiles removes the files of folder last written more than olderThan ago.
	SweepFiles(ctx context.Context, folder string, olderThan time.Duration) (removed int, err error)
}

// SharedFolders are the folders of SharedFiles.
var SharedFolders = []string{"uploads", "exports"}

// SharedFileName checks a SharedFiles name.
func SharedFileName(name string) error {
	folder, file, ok := strings.Cut(name, "/")
	valid := ok && file != "" && len(file) <= 128 && file[0] != '.'
	for _, c := range file {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '.' || c == '-' || c == '_') {
			valid = false
		}
	}
	if !valid || (folder != SharedFolders[0] && folder != SharedFolders[1]) {
		return fmt.Errorf("%w: shared file name %q", ErrInvalid, name)
	}
	return nil
}
