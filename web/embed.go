package web

import (
	"embed"
	"io/fs"
)

// dist holds the page as built by `npm run build` (see package.json). On a
// clean clone it holds only dist/.keep, so the Go build never fails; the page
// is then missing and HasPage reports false.
//
//go:embed all:dist
var dist embed.FS

// Assets returns the built page: index.html at the root, the bundle and
// stylesheet under content-hashed names (app-[hash].js, app-[hash].css, which
// index.html references), their images under assets/, the land outline and
// the third-party notices.
func Assets() fs.FS {
	sub, err := fs.Sub(dist, "dist")
	if err != nil {
		// fs.Sub fails only for an invalid path; "dist" is valid.
		panic(err)
	}
	return sub
}

// HasPage reports whether the embedded files include a built page
// (index.html), that is whether `npm run build` ran before `go build`.
func HasPage() bool {
	_, err := fs.Stat(Assets(), "index.html")
	return err == nil
}
