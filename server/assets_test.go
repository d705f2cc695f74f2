package server

import (
	"bytes"
	"compress/gzip"
	"io"
	"net/http"
	"net/http/httptest"
	"regexp"
	"strings"
	"testing"

	"ridgeflank/web"
)

// TestPageAssets: the page's files come gzip-compressed when Accept-Encoding allows it (RFC 9110
// §12.5.3) and decode to the same bytes, carry an entity tag that a conditional GET answers with
// 304 (RFC 9110 §13.1.2), and cache headers: immutable for names with a content hash, no-cache
// for the others.
func TestPageAssets(t *testing.T) {
	index := "<!doctype html><title>ridgeflank</title>" + strings.Repeat("<p>residual depth</p>\n", 100)
	js := strings.Repeat("export const depthM = 4000;\n", 200)
	land := strings.Repeat(`{"type":"Topology"}`, 100)
	files := fsys{"index.html": index, "app-R4GYCEPN.js": js, "land-50m.json": land, "assets/land-7QWERTY2.json": strings.Repeat(`{"type":"Feature"}`, 100), "assets/marker-AB12CD34.png": "\x89PNG\r\n\x1a\n"}
	h := New(Deps{Assets: files})
	get := func(path string, hdr ...string) *httptest.ResponseRecorder {
		req := httptest.NewRequest("GET", path, nil)
		for i := 0; i+1 < len(hdr); i += 2 {
			req.Header.Set(hdr[i], hdr[i+1])
		}
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		return rec
	}
	for _, c := range []struct {
		path, want, cache string
		gzip              bool
	}{
		{"/", index, "no-cache", true},
		{"/index.html", index, "no-cache", true},
		{"/app-R4GYCEPN.js", js, "public, max-age=31536000, immutable", true},
		{"/land-50m.json", land, "no-cache", true},
		{"/assets/land-7QWERTY2.json", files["assets/land-7QWERTY2.json"], "public, max-age=31536000, immutable", true},
		{"/assets/marker-AB12CD34.png", files["assets/marker-AB12CD34.png"], "public, max-age=31536000, immutable", false},
	} {
		t.Run(c.path, func(t *testing.T) {
			for _, enc := range []struct {
				accept string
				gz     bool
			}{{"", false}, {"gzip", true}, {"br, gzip;q=0.5", true}, {"gzip;q=0", false}, {"*", true}, {"identity", false}} {
				r := get(c.path, "Accept-Encoding", enc.accept)
				if r.Code != 200 {
					t.Fatalf("Accept-Encoding %q: %d", enc.accept, r.Code)
				}
				body := r.Body.Bytes()
				gotGz := r.Header().Get("Content-Encoding") == "gzip"
				if gotGz != (enc.gz && c.gzip) {
					t.Errorf("Accept-Encoding %q: Content-Encoding %q", enc.accept, r.Header().Get("Content-Encoding"))
				}
				if gotGz {
					zr, err := gzip.NewReader(bytes.NewReader(body))
					if err != nil {
						t.Fatal(err)
					}
					if body, err = io.ReadAll(zr); err != nil {
						t.Fatal(err)
					}
				}
				if string(body) != c.want {
					t.Errorf("Accept-Encoding %q: body differs from the file (%d bytes, want %d)", enc.accept, len(body), len(c.want))
				}
				if got := r.Header().Get("Cache-Control"); got != c.cache {
					t.Errorf("Cache-Control %q, want %q", got, c.cache)
				}
				etag := r.Header().Get("ETag")
				if etag == "" {
					t.Fatal("no ETag")
				}
				again := get(c.path, "Accept-Encoding", enc.accept, "If-None-Match", etag)
				if again.Code != http.StatusNotModified || again.Body.Len() != 0 {
					t.Errorf("Accept-Encoding %q: If-None-Match %s answered %d with %d bytes, want 304", enc.accept, etag, again.Code, again.Body.Len())
				}
			}
		})
	}
	if r := get("/app-R4GYCEPN.js", "If-None-Match", `"stale"`); r.Code != 200 {
		t.Errorf("a stale entity tag answered %d, want 200", r.Code)
	}
	if r := get("/nope.js"); r.Code != 404 {
		t.Errorf("unknown asset answered %d", r.Code)
	}
}

// pageRefs are the script and stylesheet references in the built index.html.
var pageRefs = regexp.MustCompile(`<(?:script[^>]*\ssrc|link[^>]*\shref)="([^"]+)"`)

// TestEmbeddedPageCache serves the page as built into the binary (web.Assets): index.html is
// revalidated on every load (no-cache), and the script and stylesheet it references carry a
// content hash in their names, so they are served immutable for a year (RFC 9111 §5.2.2.1
// max-age, RFC 8246 immutable), still gzip-compressed on request and answering 304 to their
// entity tag.
func TestEmbeddedPageCache(t *testing.T) {
	if !web.HasPage() {
		t.Skip("the page is not built: run `make web`")
	}
	h := New(Deps{Assets: web.Assets()})
	get := func(path string, hdr ...string) *httptest.ResponseRecorder {
		req := httptest.NewRequest("GET", path, nil)
		for i := 0; i+1 < len(hdr); i += 2 {
			req.Header.Set(hdr[i], hdr[i+1])
		}
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		return rec
	}
	page := get("/", "Accept-Encoding", "gzip")
	if page.Code != 200 || page.Header().Get("Cache-Control") != "no-cache" {
		t.Fatalf("/: %d, Cache-Control %q, want 200 and no-cache", page.Code, page.Header().Get("Cache-Control"))
	}
	html := page.Body.Bytes()
	if page.Header().Get("Content-Encoding") == "gzip" {
		zr, err := gzip.NewReader(bytes.NewReader(html))
		if err != nil {
			t.Fatal(err)
		}
		if html, err = io.ReadAll(zr); err != nil {
			t.Fatal(err)
		}
	}
	refs := pageRefs.FindAllStringSubmatch(string(html), -1)
	if len(refs) != 2 {
		t.Fatalf("index.html references %d scripts and stylesheets, want 2 (bundle and stylesheet)", len(refs))
	}
	for _, m := range refs {
		p := "/" + m[1]
		t.Run(m[1], func(t *testing.T) {
			r := get(p, "Accept-Encoding", "gzip")
			if r.Code != 200 {
				t.Fatalf("%s: %d", p, r.Code)
			}
			if got := r.Header().Get("Cache-Control"); got != "public, max-age=31536000, immutable" {
				t.Errorf("%s: Cache-Control %q, want immutable for a year", p, got)
			}
			if r.Header().Get("Content-Encoding") != "gzip" {
				t.Errorf("%s: Content-Encoding %q, want gzip", p, r.Header().Get("Content-Encoding"))
			}
			etag := r.Header().Get("ETag")
			if again := get(p, "Accept-Encoding", "gzip", "If-None-Match", etag); again.Code != http.StatusNotModified {
				t.Errorf("%s: If-None-Match %s answered %d, want 304", p, etag, again.Code)
			}
		})
	}
}
