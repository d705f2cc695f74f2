package jobs

import (
	"errors"
	"fmt"
	"testing"
)

// Permanent follows the standard library's wrapping contract (errors.Is/As through %w), so a
// handler may wrap it further and the queue still sees it (contract: package errors' doc).
func TestPermanent(t *testing.T) {
	base := errors.New("not a grid file")
	tests := []struct {
		name      string
		err       error
		permanent bool
	}{
		{"plain error", base, false},
		{"nil", nil, false},
		{"permanent", Permanent(base), true},
		{"wrapped permanent", fmt.Errorf("reading a.tif: %w", Permanent(base)), true},
		{"permanent of a wrapped error", Permanent(fmt.Errorf("band 1: %w", base)), true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := IsPermanent(tc.err); got != tc.permanent {
				t.Errorf("IsPermanent = %v, want %v", got, tc.permanent)
			}
			if tc.err != nil && !errors.Is(tc.err, base) {
				t.Errorf("errors.Is(%v, base) = false: the cause is lost", tc.err)
			}
		})
	}
	if Permanent(nil) != nil {
		t.Error("Permanent(nil) != nil")
	}
	if got := Permanent(base).Error(); got != base.Error() {
		t.Errorf("message = %q, want the cause's %q", got, base.Error())
	}
}

// Messages stored or answered for a job carry no server path: a known path reads as the name
// the client gave, any other absolute path as its last element.
func TestScrubPaths(t *testing.T) {
	names := map[string]string{"/srv/data/uploads/upload-123.tif": "survey.tif"}
	for _, c := range []struct{ in, want string }{
		{`open /srv/data/uploads/upload-123.tif: not a readable grid`, `open survey.tif: not a readable grid`},
		{`writing "/srv/data/grids/ab12.tif.ovr.tmp": disk full`, `writing "ab12.tif.ovr.tmp": disk full`},
		{`GDAL: /vsis3/bucket/grids/x.tif (path=/tmp/a/b.tif)`, `GDAL: x.tif (path=b.tif)`},
		{`units m/s and km/h are not paths`, `units m/s and km/h are not paths`},
		{`/root/x: at the start`, `x: at the start`},
	} {
		if got := ScrubPaths(c.in, names); got != c.want {
			t.Errorf("ScrubPaths(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	err := Permanent(errors.New("open /srv/x/y.tif"))
	s := &ScrubbedError{Msg: ScrubPaths(err.Error(), nil), Err: err}
	if s.Error() != "open y.tif" || !IsPermanent(s) {
		t.Errorf("scrubbed error %q permanent=%v", s.Error(), IsPermanent(s))
	}
}

// A whole known path is replaced before its last element, and GDAL's `quoted' paths are found.
func TestScrubPathsOrder(t *testing.T) {
	names := map[string]string{"/d/uploads/upload-9.txt": "notes.txt", "upload-9.txt": "notes.txt"}
	in := "upload-9.txt is not a readable grid: `/d/uploads/upload-9.txt' not recognized; `/other/x.tif' neither"
	want := "notes.txt is not a readable grid: `notes.txt' not recognized; `x.tif' neither"
	for i := 0; i < 20; i++ { // map order varies
		if got := ScrubPaths(in, names); got != want {
			t.Fatalf("ScrubPaths = %q, want %q", got, want)
		}
	}
}
