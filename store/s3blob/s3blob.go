// Package s3blob keeps grid files in an S3-compatible bucket (store.Blobs). GDAL reads them in
// place through its /vsis3/ virtual file system: Path returns /vsis3/bucket/prefix/key, and
// each windowed read of a COG becomes HTTP range requests, with no local copy. The endpoint,
// region and credentials are handed to GDAL as configuration options (CPLSetConfigOption)
// when the store opens, so nothing has to be exported into the environment; GDAL's options
// are process-wide, so one process uses one object store.
//
// Put lets its writer (GDAL's COG driver, or a copy) write a local temporary file, hashes it
// and uploads it under its content key (in parts above ObjectStoreConfig.PartSizeBytes), then
// deletes the temporary file. Leases (Hold) are small objects under prefix ".leases/", renewed
// while held, so that replicas sharing the bucket do not sweep each other's imports.
//
// Importing the package registers the "s3" grid store with store.OpenBlobs.
package s3blob

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/url"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/aws/aws-sdk-go-v2/aws"
	"github.com/aws/aws-sdk-go-v2/credentials"
	"github.com/aws/aws-sdk-go-v2/service/s3"
	"github.com/aws/aws-sdk-go-v2/service/s3/types"

	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

func init() {
	store.RegisterBlobs(store.GridStoreS3, func(ctx context.Context, cfg store.Config) (store.Blobs, error) {
		return Open(ctx, cfg.GridStore, cfg.ObjectStore, cfg.Logger)
	})
}

const (
	gridFileExt    = ".tif"
	leasePrefix    = ".leases/"
	catalogueName  = ".catalogue"
	defaultRegion  = "us-east-1"
	minPartSize    = 5 << 20  // the S3 minimum for all parts but the last
	defaultPart    = 64 << 20 // parts of multipart uploads
	holdRetryDelay = 10 * time.Millisecond
)

// LeaseTTL is how long a lease object counts as held without renewal; a holder renews it every
// LeaseTTL/4, so a lease left by a killed process stops blocking sweeps after LeaseTTL.
var LeaseTTL = 5 * time.Minute

// Blobs is the S3 implementation of store.Blobs.
type Blobs struct {
	client   *s3.Client
	bucket   string
	prefix   string // "" or ends in "/"
	partSize int64
	log      *slog.Logger

	mu       sync.Mutex
	sweeping bool // a sweep of this process is running (Hold waits)
	holds    int  // leases of this process
}

var _ store.Blobs = (*Blobs)(nil)

// ParseURL splits s3://bucket/prefix into its bucket and key prefix ("" or ending in "/").
func ParseURL(raw string) (bucket, prefix string, err error) {
	u, err := url.Parse(strings.TrimSpace(raw))
	if err != nil || u.Scheme != store.GridStoreS3 || u.Host == "" || u.User != nil || u.RawQuery != "" || u.Fragment != "" {
		return "", "", fmt.Errorf("%w: grid store %q: want s3://bucket or s3://bucket/prefix", store.ErrInvalid, raw)
	}
	prefix = strings.Trim(u.Path, "/")
	if strings.Contains(prefix, "//") || strings.HasPrefix(prefix, ".") {
		return "", "", fmt.Errorf("%w: grid store %q: bad key prefix", store.ErrInvalid, raw)
	}
	if prefix != "" {
		prefix += "/"
	}
	return u.Host, prefix, nil
}

// Open connects to the bucket of gridStore (s3://bucket/prefix), checks that it exists, and
// points GDAL's /vsis3/ at the same server and credentials.
func Open(ctx context.Context, gridStore string, cfg store.ObjectStoreConfig, log *slog.Logger) (*Blobs, error) {
	if log == nil {
		log = slog.Default()
	}
	bucket, prefix, err := ParseURL(gridStore)
	if err != nil {
		return nil, err
	}
	if cfg.Region == "" {
		cfg.Region = defaultRegion
	}
	part := cfg.PartSizeBytes
	if part == 0 {
		part = defaultPart
	}
	if part < minPartSize {
		return nil, fmt.Errorf("%w: object store part size %d bytes is below the S3 minimum of 5 MiB", store.ErrInvalid, part)
	}
	gopts, err := gdalOptions(cfg)
	if err != nil {
		return nil, err
	}
	if (cfg.AccessKeyID == "") != (cfg.SecretAccessKey == "") {
		return nil, fmt.Errorf("%w: object store credentials: give both the access key id and the secret access key, or neither", store.ErrInvalid)
	}
	opts := s3.Options{
		Region: cfg.Region,
		// S3-compatible servers do not all accept the SDK's default trailing checksums.
		RequestChecksumCalculation: aws.RequestChecksumCalculationWhenRequired,
		ResponseChecksumValidation: aws.ResponseChecksumValidationWhenRequired,
	}
	if cfg.Endpoint != "" {
		opts.BaseEndpoint = aws.String(strings.TrimRight(cfg.Endpoint, "/"))
		opts.UsePathStyle = true
	}
	if cfg.AccessKeyID != "" {
		opts.Credentials = credentials.NewStaticCredentialsProvider(cfg.AccessKeyID, cfg.SecretAccessKey.Reveal(), "")
	} else {
		opts.Credentials = aws.AnonymousCredentials{}
	}
	b := &Blobs{client: s3.New(opts), bucket: bucket, prefix: prefix, partSize: part, log: log}
	if _, err := b.client.HeadBucket(ctx, &s3.HeadBucketInput{Bucket: aws.String(bucket)}); err != nil {
		if statusOf(err) != 404 {
			return nil, fmt.Errorf("object store: bucket %q: %w", bucket, err)
		}
		if !cfg.CreateBucket {
			return nil, fmt.Errorf("%w: object store: bucket %q does not exist (create it first)", store.ErrInvalid, bucket)
		}
		if _, err := b.client.CreateBucket(ctx, &s3.CreateBucketInput{Bucket: aws.String(bucket)}); err != nil && statusOf(err) != 409 {
			return nil, fmt.Errorf("object store: creating bucket %q: %w", bucket, err)
		}
		log.Info("grid store: bucket created", "bucket", bucket)
	}
	gdal.SetConfigOptions(gopts)
	log.Info("grid store: object store bucket", "bucket", bucket, "prefix", prefix, "endpoint", cfg.Endpoint)
	return b, nil
}

// gdalOptions are GDAL's configuration options for /vsis3/ on the configured server
// (GDAL's documentation of /vsis3/ names each).
func gdalOptions(cfg store.ObjectStoreConfig) (map[string]string, error) {
	o := map[string]string{
		"AWS_REGION":            cfg.Region,
		"AWS_ACCESS_KEY_ID":     cfg.AccessKeyID,
		"AWS_SECRET_ACCESS_KEY": cfg.SecretAccessKey.Reveal(),
		"AWS_SESSION_TOKEN":     "",
		"AWS_NO_SIGN_REQUEST":   "NO",
		// Opening a file must not list the bucket's "directory" (thousands of grids).
		"GDAL_DISABLE_READDIR_ON_OPEN": "EMPTY_DIR",
		// GDAL's cache of fetched ranges, process-wide (16 MiB, stated rather than assumed).
		"CPL_VSIL_CURL_CACHE_SIZE": "16777216",
		"GDAL_HTTP_MAX_RETRY":      "3",
		"GDAL_HTTP_RETRY_DELAY":    "1",
	}
	if cfg.AccessKeyID == "" {
		o["AWS_NO_SIGN_REQUEST"] = "YES"
	}
	if cfg.Endpoint == "" {
		o["AWS_S3_ENDPOINT"], o["AWS_HTTPS"], o["AWS_VIRTUAL_HOSTING"] = "", "YES", ""
		return o, nil
	}
	u, err := url.Parse(cfg.Endpoint)
	if err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" || strings.Trim(u.Path, "/") != "" || u.User != nil {
		return nil, fmt.Errorf("%w: object store endpoint %q: want http://host:port or https://host", store.ErrInvalid, cfg.Endpoint)
	}
	o["AWS_S3_ENDPOINT"] = u.Host
	o["AWS_HTTPS"] = map[string]string{"http": "NO", "https": "YES"}[u.Scheme]
	o["AWS_VIRTUAL_HOSTING"] = "FALSE"
	return o, nil
}

// IsKey reports whether name is a well-formed blob key.
func IsKey(name string) bool {
	return strings.HasSuffix(name, gridFileExt) && store.IsSHA256Hex(strings.TrimSuffix(name, gridFileExt))
}

func (b *Blobs) object(key string) (string, error) {
	if !IsKey(key) {
		return "", fmt.Errorf("%w: grid file key %q", store.ErrInvalid, key)
	}
	return b.prefix + key, nil
}

// Bucket and Prefix say where the blobs are.
func (b *Blobs) Bucket() string { return b.bucket }

// Prefix returns the key prefix ("" or ending in "/").
func (b *Blobs) Prefix() string { return b.prefix }

// Hold implements store.Blobs: it writes a lease object and renews it until released.
func (b *Blobs) Hold(ctx context.Context) (func(), error) {
	for {
		b.mu.Lock()
		if !b.sweeping {
			b.holds++
			b.mu.Unlock()
			break
		}
		b.mu.Unlock()
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-time.After(holdRetryDelay):
		}
	}
	unhold := func() {
		b.mu.Lock()
		b.holds--
		b.mu.Unlock()
	}
	lease := b.prefix + leasePrefix + store.NewID("")
	put := func(ctx context.Context) error {
		_, err := b.client.PutObject(ctx, &s3.PutObjectInput{Bucket: &b.bucket, Key: &lease, Body: strings.NewReader(time.Now().UTC().Format(time.RFC3339))})
		return err
	}
	if err := put(ctx); err != nil {
		unhold()
		return nil, fmt.Errorf("object store lease: %w", err)
	}
	stop := make(chan struct{})
	done := make(chan struct{})
	go func() {
		defer close(done)
		t := time.NewTicker(LeaseTTL / 4)
		defer t.Stop()
		for {
			select {
			case <-stop:
				return
			case <-t.C:
				rctx, cancel := context.WithTimeout(context.Background(), LeaseTTL/4)
				if err := put(rctx); err != nil {
					b.log.Warn("grid store: renewing a lease", "err", err)
				}
				cancel()
			}
		}
	}()
	var once sync.Once
	return func() {
		once.Do(func() {
			close(stop)
			<-done
			dctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
			defer cancel()
			if _, err := b.client.DeleteObject(dctx, &s3.DeleteObjectInput{Bucket: &b.bucket, Key: &lease}); err != nil {
				b.log.Warn("grid store: removing a lease (it expires by itself)", "err", err)
			}
			unhold()
		})
	}, nil
}

// Put implements store.Blobs. The writer writes a local temporary file (in TMPDIR), which is
// hashed, uploaded under its content key and deleted.
func (b *Blobs) Put(ctx context.Context, sha256Hex string, write func(tmpPath string) error) (store.BlobInfo, error) {
	if sha256Hex != "" {
		if !store.IsSHA256Hex(sha256Hex) {
			return store.BlobInfo{}, fmt.Errorf("%w: content hash must be 64 lower-case hex digits", store.ErrInvalid)
		}
		key := sha256Hex + gridFileExt
		if size, ok, err := b.head(ctx, b.prefix+key); err != nil {
			return store.BlobInfo{}, err
		} else if ok {
			return store.BlobInfo{Key: key, SHA256: sha256Hex, SizeBytes: size, Existed: true}, nil
		}
	}
	if err := ctx.Err(); err != nil {
		return store.BlobInfo{}, err
	}
	dir, err := os.MkdirTemp("", "ridgeflank-upload-")
	if err != nil {
		return store.BlobInfo{}, fmt.Errorf("grid file: temporary directory: %w", err)
	}
	defer os.RemoveAll(dir) // the file and any side files a writer left
	tmp := filepath.Join(dir, "grid"+gridFileExt)
	if err := write(tmp); err != nil {
		return store.BlobInfo{}, fmt.Errorf("writing grid file: %w", store.NoSpace(err))
	}
	f, err := os.Open(tmp)
	if errors.Is(err, os.ErrNotExist) {
		return store.BlobInfo{}, fmt.Errorf("grid file: %w: the writer created no file", store.ErrInvalid)
	} else if err != nil {
		return store.BlobInfo{}, fmt.Errorf("grid file: %w", err)
	}
	defer f.Close()
	h := sha256.New()
	size, err := io.Copy(h, f)
	if err != nil {
		return store.BlobInfo{}, fmt.Errorf("grid file: %w", err)
	}
	sum := hex.EncodeToString(h.Sum(nil))
	if sha256Hex != "" && sum != sha256Hex {
		return store.BlobInfo{}, fmt.Errorf("%w: written grid file has SHA-256 %s, expected %s", store.ErrInvalid, sum, sha256Hex)
	}
	key := sum + gridFileExt
	info := store.BlobInfo{Key: key, SHA256: sum, SizeBytes: size}
	if _, ok, err := b.head(ctx, b.prefix+key); err != nil {
		return store.BlobInfo{}, err
	} else if ok {
		info.Existed = true
		return info, nil
	}
	if err := b.upload(ctx, b.prefix+key, f, size); err != nil {
		return store.BlobInfo{}, fmt.Errorf("uploading grid file: %w", err)
	}
	return info, nil
}

// upload stores f under object: one PUT up to the part size, else a multipart upload (aborted
// on failure, so no parts are left behind).
func (b *Blobs) upload(ctx context.Context, object string, f *os.File, size int64) error {
	if size <= b.partSize {
		_, err := b.client.PutObject(ctx, &s3.PutObjectInput{
			Bucket: &b.bucket, Key: &object, Body: io.NewSectionReader(f, 0, size), ContentLength: aws.Int64(size),
			ContentType: aws.String("image/tiff; application=geotiff; profile=cloud-optimized"),
		})
		return err
	}
	mu, err := b.client.CreateMultipartUpload(ctx, &s3.CreateMultipartUploadInput{
		Bucket: &b.bucket, Key: &object, ContentType: aws.String("image/tiff; application=geotiff; profile=cloud-optimized"),
	})
	if err != nil {
		return err
	}
	abort := func(err error) error {
		actx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 30*time.Second)
		defer cancel()
		if _, aerr := b.client.AbortMultipartUpload(actx, &s3.AbortMultipartUploadInput{Bucket: &b.bucket, Key: &object, UploadId: mu.UploadId}); aerr != nil {
			b.log.Warn("grid store: aborting a multipart upload", "key", object, "err", aerr)
		}
		return err
	}
	var parts []types.CompletedPart
	for n, off := int32(1), int64(0); off < size; n, off = n+1, off+b.partSize {
		ln := min(b.partSize, size-off)
		out, err := b.client.UploadPart(ctx, &s3.UploadPartInput{
			Bucket: &b.bucket, Key: &object, UploadId: mu.UploadId, PartNumber: aws.Int32(n),
			Body: io.NewSectionReader(f, off, ln), ContentLength: aws.Int64(ln),
		})
		if err != nil {
			return abort(fmt.Errorf("part %d: %w", n, err))
		}
		parts = append(parts, types.CompletedPart{ETag: out.ETag, PartNumber: aws.Int32(n)})
	}
	if _, err := b.client.CompleteMultipartUpload(ctx, &s3.CompleteMultipartUploadInput{
		Bucket: &b.bucket, Key: &object, UploadId: mu.UploadId, MultipartUpload: &types.CompletedMultipartUpload{Parts: parts},
	}); err != nil {
		return abort(err)
	}
	return nil
}

// head returns an object's size and whether it exists.
func (b *Blobs) head(ctx context.Context, object string) (int64, bool, error) {
	out, err := b.client.HeadObject(ctx, &s3.HeadObjectInput{Bucket: &b.bucket, Key: &object})
	if err != nil {
		if statusOf(err) == 404 {
			return 0, false, nil
		}
		return 0, false, fmt.Errorf("object store: %w", err)
	}
	return aws.ToInt64(out.ContentLength), true, nil
}

// statusOf returns the HTTP status of an SDK error (0 if it has none).
func statusOf(err error) int {
	var re interface{ HTTPStatusCode() int }
	if errors.As(err, &re) {
		return re.HTTPStatusCode()
	}
	return 0
}

// Open implements store.Blobs: the reader fetches byte ranges as it is read and seeked.
func (b *Blobs) Open(ctx context.Context, key string) (io.ReadSeekCloser, error) {
	object, err := b.object(key)
	if err != nil {
		return nil, err
	}
	return b.openObject(ctx, object, "grid file "+key)
}

// openObject opens object for ranged reads, or answers store.ErrNotFound naming what.
func (b *Blobs) openObject(ctx context.Context, object, what string) (io.ReadSeekCloser, error) {
	size, ok, err := b.head(ctx, object)
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, fmt.Errorf("%s: %w", what, store.ErrNotFound)
	}
	return &reader{ctx: ctx, b: b, object: object, size: size}, nil
}

type reader struct {
	ctx    context.Context
	b      *Blobs
	object string
	size   int64
	off    int64
	body   io.ReadCloser
}

func (r *reader) Read(p []byte) (int, error) {
	if r.off >= r.size {
		return 0, io.EOF
	}
	if r.body == nil {
		out, err := r.b.client.GetObject(r.ctx, &s3.GetObjectInput{Bucket: &r.b.bucket, Key: &r.object, Range: aws.String(fmt.Sprintf("bytes=%d-", r.off))})
		if err != nil {
			return 0, fmt.Errorf("object store: %w", err)
		}
		r.body = out.Body
	}
	n, err := r.body.Read(p)
	r.off += int64(n)
	if err == io.EOF && r.off < r.size {
		err = io.ErrUnexpectedEOF
	}
	return n, err
}

func (r *reader) Seek(offset int64, whence int) (int64, error) {
	var abs int64
	switch whence {
	case io.SeekStart:
		abs = offset
	case io.SeekCurrent:
		abs = r.off + offset
	case io.SeekEnd:
		abs = r.size + offset
	default:
		return 0, fmt.Errorf("seek: bad whence %d", whence)
	}
	if abs < 0 {
		return 0, fmt.Errorf("seek: negative position")
	}
	if abs != r.off && r.body != nil {
		r.body.Close()
		r.body = nil
	}
	r.off = abs
	return abs, nil
}

func (r *reader) Close() error {
	if r.body != nil {
		err := r.body.Close()
		r.body = nil
		return err
	}
	return nil
}

// Path implements store.Blobs: GDAL's virtual path of the object.
func (b *Blobs) Path(key string) (string, error) {
	object, err := b.object(key)
	if err != nil {
		return "", err
	}
	return "/vsis3/" + b.bucket + "/" + object, nil
}

// Delete implements store.Blobs.
func (b *Blobs) Delete(ctx context.Context, key string) error {
	object, err := b.object(key)
	if err != nil {
		return err
	}
	if _, err := b.client.DeleteObject(ctx, &s3.DeleteObjectInput{Bucket: &b.bucket, Key: &object}); err != nil && statusOf(err) != 404 {
		return fmt.Errorf("object store: %w", err)
	}
	return nil
}

// listed is one object under a prefix.
type listed struct {
	key      string // without the store's prefix
	modified time.Time
}

// list returns the objects directly under the store's prefix + sub (no deeper "folders").
func (b *Blobs) list(ctx context.Context, sub string) ([]listed, error) {
	p := s3.NewListObjectsV2Paginator(b.client, &s3.ListObjectsV2Input{Bucket: &b.bucket, Prefix: aws.String(b.prefix + sub), Delimiter: aws.String("/")})
	var out []listed
	for p.HasMorePages() {
		page, err := p.NextPage(ctx)
		if err != nil {
			return nil, fmt.Errorf("object store: listing: %w", err)
		}
		for _, o := range page.Contents {
			out = append(out, listed{key: strings.TrimPrefix(aws.ToString(o.Key), b.prefix), modified: aws.ToTime(o.LastModified)})
		}
	}
	return out, nil
}

// List implements store.Blobs.
func (b *Blobs) List(ctx context.Context) ([]string, error) {
	objs, err := b.list(ctx, "")
	if err != nil {
		return nil, err
	}
	var keys []string
	for _, o := range objs {
		if IsKey(o.key) {
			keys = append(keys, o.key)
		}
	}
	sort.Strings(keys)
	return keys, nil
}

// liveLeases counts lease objects renewed within LeaseTTL and removes expired ones.
func (b *Blobs) liveLeases(ctx context.Context) (int, error) {
	leases, err := b.list(ctx, leasePrefix)
	if err != nil {
		return 0, err
	}
	live := 0
	for _, l := range leases {
		if time.Since(l.modified) < LeaseTTL {
			live++
			continue
		}
		k := b.prefix + l.key
		if _, err := b.client.DeleteObject(ctx, &s3.DeleteObjectInput{Bucket: &b.bucket, Key: &k}); err != nil {
			b.log.Warn("grid store: removing an expired lease", "err", err)
		}
	}
	return live, nil
}

// Sweep implements store.Blobs. It removes nothing while any process holds a lease on the
// bucket (checked before reading the catalogue and again before deleting), and claims the
// prefix for catalogueID through the object ".catalogue".
func (b *Blobs) Sweep(ctx context.Context, catalogueID string, referenced func(ctx context.Context) (map[string]bool, error)) ([]string, error) {
	b.mu.Lock()
	if b.holds > 0 || b.sweeping {
		b.mu.Unlock()
		return nil, nil
	}
	b.sweeping = true
	b.mu.Unlock()
	defer func() {
		b.mu.Lock()
		b.sweeping = false
		b.mu.Unlock()
	}()
	if n, err := b.liveLeases(ctx); err != nil || n > 0 {
		return nil, err // an import is in progress; the next sweep will catch up
	}
	keys, err := b.List(ctx)
	if err != nil {
		return nil, err
	}
	if err := b.claim(ctx, catalogueID, len(keys) > 0); err != nil {
		return nil, err
	}
	if len(keys) == 0 {
		return nil, nil
	}
	ref, err := referenced(ctx)
	if err != nil {
		return nil, fmt.Errorf("sweep: reading the catalogue: %w", err)
	}
	if n, err := b.liveLeases(ctx); err != nil || n > 0 {
		return nil, err
	}
	var removed []string
	for _, k := range keys {
		if ref[k] {
			continue
		}
		if err := b.Delete(ctx, k); err != nil {
			return removed, err
		}
		removed = append(removed, k)
	}
	return removed, nil
}

// claim checks (and on first use records) which catalogue owns the prefix.
func (b *Blobs) claim(ctx context.Context, catalogueID string, hasKeys bool) error {
	if catalogueID == "" {
		return fmt.Errorf("%w: sweep needs the catalogue id", store.ErrInvalid)
	}
	object := b.prefix + catalogueName
	out, err := b.client.GetObject(ctx, &s3.GetObjectInput{Bucket: &b.bucket, Key: &object})
	if err == nil {
		defer out.Body.Close()
		raw, err := io.ReadAll(io.LimitReader(out.Body, 1<<10))
		if err != nil {
			return fmt.Errorf("object store: %w", err)
		}
		if got := strings.TrimSpace(string(raw)); got != catalogueID {
			return fmt.Errorf("%w: grid store s3://%s/%s belongs to catalogue %s, not %s; not sweeping", store.ErrConflict, b.bucket, b.prefix, got, catalogueID)
		}
		return nil
	}
	if statusOf(err) != 404 {
		return fmt.Errorf("object store: %w", err)
	}
	if hasKeys {
		return fmt.Errorf("%w: grid store s3://%s/%s holds grid files but no %s object; not sweeping (store the catalogue id %s in it to adopt them)", store.ErrConflict, b.bucket, b.prefix, catalogueName, catalogueID)
	}
	if _, err := b.client.PutObject(ctx, &s3.PutObjectInput{Bucket: &b.bucket, Key: &object, Body: strings.NewReader(catalogueID + "\n")}); err != nil {
		return fmt.Errorf("object store: %w", err)
	}
	return nil
}
