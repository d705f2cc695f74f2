package server

import (
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"io/fs"
	"mime"
	"net/http"
	"path"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"time"
)

// hashedName matches a file name carrying a content hash (esbuild's "[name]-[hash]": eight
// letters and digits before the extension), which never changes content under the same name.
var hashedName = regexp.MustCompile(`-[A-Z0-9]{8}\.[a-z0-9]+$`)

// compressible are the media types worth gzip (text; images and fonts are compressed already).
func compressible(ctype string) bool {
	mt, _, _ := strings.Cut(ctype, ";")
	switch {
	case strings.HasPrefix(mt, "text/"), strings.HasSuffix(mt, "+json"), strings.HasSuffix(mt, "+xml"):
		return true
	}
	switch mt {
	case "application/javascript", "application/json", "image/svg+xml", "application/xml", "application/wasm":
		return true
	}
	return false
}

// asset is one file of the page, read once: its bytes, its gzip form (nil when not worth it),
// media type and entity tag (from the SHA-256 of the content).
type asset struct {
	body, gz []byte
	ctype    string
	etag     string
}

// assetCache holds the assets read so far (the embedded page never changes while serving).
type assetCache struct {
	fsys fs.FS
	m    sync.Map // path -> *asset
}

func (c *assetCache) get(p string) (*asset, error) {
	if v, ok := c.m.Load(p); ok {
		return v.(*asset), nil
	}
	body, err := fs.ReadFile(c.fsys, p)
	if err != nil {
		return nil, err
	}
	ctype := mime.TypeByExtension(path.Ext(p))
	if ctype == "" {
		ctype = http.DetectContentType(body)
	}
	sum := sha256.Sum256(body)
	a := &asset{body: body, ctype: ctype, etag: hex.EncodeToString(sum[:12])}
	if compressible(ctype) && len(body) > 256 {
		var b bytes.Buffer
		zw, _ := gzip.NewWriterLevel(&b, gzip.BestCompression)
		zw.Write(body)
		if zw.Close() == nil && b.Len() < len(body) {
			a.gz = b.Bytes()
		}
	}
	v, _ := c.m.LoadOrStore(p, a)
	return v.(*asset), nil
}

// acceptsGzip reports whether the request's Accept-Encoding allows gzip (RFC 9110 §12.5.3: a
// coding listed with q=0 is refused; "*" stands for any coding not listed).
func acceptsGzip(r *http.Request) bool {
	gzipQ, starQ := -1.0, -1.0
	for _, part := range strings.Split(r.Header.Get("Accept-Encoding"), ",") {
		name, params, _ := strings.Cut(strings.TrimSpace(part), ";")
		q := 1.0
		for _, p := range strings.Split(params, ";") {
			if k, v, ok := strings.Cut(strings.TrimSpace(p), "="); ok && strings.EqualFold(strings.TrimSpace(k), "q") {
				if f, err := strconv.ParseFloat(strings.TrimSpace(v), 64); err == nil {
					q = f
				}
			}
		}
		switch strings.ToLower(strings.TrimSpace(name)) {
		case "gzip", "x-gzip":
			gzipQ = q
		case "*":
			starQ = q
		}
	}
	if gzipQ >= 0 {
		return gzipQ > 0
	}
	return starQ > 0
}

// assets serves the page: index.html at "/", every file with an entity tag (a conditional GET
// answers 304), gzip for text when the client accepts it, and Cache-Control: files whose names
// carry a content hash (the bundle app-[hash].js, its stylesheet, their images) are immutable
// for a year, the others (index.html, land-50m.json, the notices) are revalidated on every use (no-cache). Unknown paths fall through to a 404 problem.
func (s *server) assets() http.Handler {
	c := &assetCache{fsys: s.deps.Assets}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		p := strings.TrimPrefix(path.Clean("/"+r.URL.Path), "/")
		if p == "" {
			p = "index.html"
		}
		if st, err := fs.Stat(s.deps.Assets, p); err == nil && st.IsDir() {
			p = path.Join(p, "index.html")
		}
		a, err := c.get(p)
		if err != nil {
			writeProblem(w, r, problem(CodeNotFound, "no resource at %s", r.URL.Path))
			return
		}
		h := w.Header()
		h.Set("Content-Type", a.ctype)
		if hashedName.MatchString(p) {
			h.Set("Cache-Control", "public, max-age=31536000, immutable")
		} else {
			h.Set("Cache-Control", "no-cache")
		}
		body, etag := a.body, a.etag
		if a.gz != nil {
			h.Add("Vary", "Accept-Encoding")
			if acceptsGzip(r) {
				body, etag = a.gz, a.etag+"-gz"
				h.Set("Content-Encoding", "gzip")
			}
		}
		h.Set("ETag", `"`+etag+`"`)
		// ServeContent answers If-None-Match (304), HEAD and ranges.
		http.ServeContent(w, r, p, time.Time{}, bytes.NewReader(body))
	})
}
