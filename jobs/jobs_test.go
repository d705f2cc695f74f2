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
