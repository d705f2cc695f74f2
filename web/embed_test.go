package web

import (
	"io/fs"
	"os"
	"path"
	"regexp"
	"strings"
	"testing"
)

// hashedApp is how the build names the entry bundle and its stylesheet: esbuild's
// "[name]-[hash]" with an eight-character base32 hash (A–Z, 2–7), the form the server
// serves as immutable (server/assets.go).
var hashedApp = regexp.MustCompile(`^app-[A-Z2-7]{8}\.(js|css)$`)

// hashedAsset is how the build names the images the bundle uses ("assets/[name]-[hash]").
var hashedAsset = regexp.MustCompile(`^assets/[^/]+-[A-Z2-7]{8}\.[a-z0-9]+$`)

// pageRefs are the script and stylesheet references in index.html.
var pageRefs = regexp.MustCompile(`<(?:script[^>]*\ssrc|link[^>]*\shref)="([^"]+)"`)

// cssURLs are the url(...) references in a stylesheet.
var cssURLs = regexp.MustCompile(`url\(\s*"?([^")]+)"?\s*\)`)

// TestAssets checks the embedded build: index.html loads the content-hashed bundle and
// stylesheet, both exist in the same FS (with the images the stylesheet points at, the
// land outline the page fetches and the notices), and no unhashed app.js/app.css is left.
func TestAssets(t *testing.T) {
	if !HasPage() {
		if os.Getenv("CI") != "" {
			t.Fatal("the page is not built (run `npm ci && npm run build` in web/); CI is set, so this fails")
		}
		t.Skip("the page is not built: run `npm ci && npm run build` in web/")
	}
	a := Assets()
	index, err := fs.ReadFile(a, "index.html")
	if err != nil {
		t.Fatal(err)
	}
	var js, css int
	for _, m := range pageRefs.FindAllStringSubmatch(string(index), -1) {
		name := m[1]
		t.Run(name, func(t *testing.T) {
			if !hashedApp.MatchString(name) {
				t.Fatalf("index.html references %q, want a content-hashed app-XXXXXXXX.js/.css", name)
			}
			body, err := fs.ReadFile(a, name)
			if err != nil {
				t.Fatalf("%s is referenced by index.html but missing from the build: %v", name, err)
			}
			if strings.HasSuffix(name, ".css") {
				css++
				for _, u := range cssURLs.FindAllStringSubmatch(string(body), -1) {
					if strings.HasPrefix(u[1], "data:") || strings.HasPrefix(u[1], "#") {
						continue // inline data, or Leaflet's VML behaviour for old browsers
					}
					p := path.Clean(u[1])
					if _, err := fs.Stat(a, p); err != nil {
						t.Errorf("%s points at %s, which is missing: %v", name, u[1], err)
					}
					if !hashedAsset.MatchString(p) {
						t.Errorf("%s points at %s, want a content-hashed name under assets/", name, u[1])
					}
				}
			} else {
				js++
			}
		})
	}
	if js != 1 || css != 1 {
		t.Errorf("index.html references %d scripts and %d stylesheets, want 1 and 1", js, css)
	}
	for _, name := range []string{"land-50m.json", "THIRD-PARTY-NOTICES.txt"} {
		if _, err := fs.Stat(a, name); err != nil {
			t.Errorf("%s is missing from the build: %v", name, err)
		}
	}
	for _, name := range []string{"app.js", "app.css"} {
		if _, err := fs.Stat(a, name); err == nil {
			t.Errorf("an unhashed %s is in the build; it could never be cached as immutable", name)
		}
	}
}
