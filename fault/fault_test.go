package fault

import (
	"errors"
	"fmt"
	"io"
	"testing"
)

func TestNewWrapsCause(t *testing.T) {
	e := New(InvalidTrack, "file", "line %d: %w", 3, io.ErrUnexpectedEOF)
	if e.Msg != "line 3: unexpected EOF" {
		t.Fatalf("message %q", e.Msg)
	}
	if !errors.Is(e, io.ErrUnexpectedEOF) {
		t.Fatal("cause not wrapped")
	}
	wrapped := fmt.Errorf("reading: %w", e)
	if KindOf(wrapped) != InvalidTrack || !Is(wrapped, InvalidTrack) || Is(wrapped, NoData) {
		t.Fatalf("kind through wrapping: %q", KindOf(wrapped))
	}
	if KindOf(io.EOF) != "" {
		t.Fatal("a plain error has no kind")
	}
}

func TestOverCarriesTheLimit(t *testing.T) {
	e := Over("max_vertices", 10, 12, "coords", "the geometry has %d vertices; the limit is %d", 12, 10)
	got, ok := As(fmt.Errorf("x: %w", e))
	if !ok || got.Kind != LimitExceeded || got.Limit == nil || *got.Limit != (Limit{"max_vertices", 10, 12}) || got.Field != "coords" {
		t.Fatalf("got %+v", got)
	}
}
