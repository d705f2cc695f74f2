package server

import (
	"io/fs"
	"testing/fstest"
)

// fsys is a tiny in-memory page for tests.
type fsys map[string]string

func (f fsys) Open(name string) (fs.File, error) {
	m := fstest.MapFS{}
	for k, v := range f {
		m[k] = &fstest.MapFile{Data: []byte(v)}
	}
	return m.Open(name)
}
