package web

import (
	"io/fs"
	"os"
	"strings"
	"testing"
)

// TestAssets checks the embedded build: index.html loads app.js and app.css,
// and both (and the land outline the page fetches) are in the same FS.
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
	for _, name := range []string{"app.js", "app.css", "land-50m.json", "THIRD-PARTY-NOTICES.txt"} {
		t.Run(name, func(t *testing.T) {
			if _, err := fs.Stat(a, name); err != nil {
				t.Errorf("%s is missing from the build: %v", name, err)
			}
			if strings.HasPrefix(name, "app.") && !strings.Contains(string(index), `"`+name+`"`) {
				t.Errorf("index.html does not reference %s", name)
			}
		})
	}
}
