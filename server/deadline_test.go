package server

import (
	"context"
	"errors"
	"testing"
	"time"
)

// The lazy deadline behaves as context.WithTimeout (the reference: Go's context package and its
// documented contract): Err is nil until the end and then stays the same, Done is closed once
// Err is not nil, the parent's end ends it, values pass through.
func TestLazyDeadline(t *testing.T) {
	type key struct{}
	t.Run("deadline without anyone waiting", func(t *testing.T) {
		ctx, release := withLazyDeadline(context.WithValue(context.Background(), key{}, "v"), 20*time.Millisecond)
		defer release()
		if ctx.Err() != nil || ctx.Value(key{}) != "v" {
			t.Fatalf("err %v, value %v", ctx.Err(), ctx.Value(key{}))
		}
		if d, ok := ctx.Deadline(); !ok || time.Until(d) > 20*time.Millisecond {
			t.Fatalf("deadline %v %v", d, ok)
		}
		time.Sleep(30 * time.Millisecond)
		if !errors.Is(ctx.Err(), context.DeadlineExceeded) {
			t.Fatalf("after the deadline: %v", ctx.Err())
		}
		select {
		case <-ctx.Done():
		default:
			t.Fatal("Err reports the end but Done is open")
		}
	})
	t.Run("deadline while waiting", func(t *testing.T) {
		ctx, release := withLazyDeadline(context.Background(), 20*time.Millisecond)
		defer release()
		select {
		case <-ctx.Done():
		case <-time.After(5 * time.Second):
			t.Fatal("Done not closed at the deadline")
		}
		if !errors.Is(ctx.Err(), context.DeadlineExceeded) {
			t.Fatal(ctx.Err())
		}
	})
	t.Run("parent cancelled while waiting", func(t *testing.T) {
		parent, cancel := context.WithCancel(context.Background())
		ctx, release := withLazyDeadline(parent, time.Hour)
		defer release()
		done := ctx.Done()
		cancel()
		select {
		case <-done:
		case <-time.After(5 * time.Second):
			t.Fatal("Done not closed when the parent ended")
		}
		if !errors.Is(ctx.Err(), context.Canceled) {
			t.Fatal(ctx.Err())
		}
	})
	t.Run("parent cancelled, nobody waiting", func(t *testing.T) {
		parent, cancel := context.WithCancel(context.Background())
		ctx, release := withLazyDeadline(parent, time.Hour)
		defer release()
		cancel()
		if !errors.Is(ctx.Err(), context.Canceled) {
			t.Fatal(ctx.Err())
		}
		<-ctx.Done() // closed already
	})
	t.Run("earlier parent deadline", func(t *testing.T) {
		parent, cancel := context.WithTimeout(context.Background(), time.Minute)
		defer cancel()
		ctx, release := withLazyDeadline(parent, time.Hour)
		defer release()
		pd, _ := parent.Deadline()
		if d, _ := ctx.Deadline(); !d.Equal(pd) {
			t.Fatalf("deadline %v, parent's %v", d, pd)
		}
	})
	t.Run("children of a derived context end with it", func(t *testing.T) {
		ctx, release := withLazyDeadline(context.Background(), time.Hour)
		child, cancel := context.WithCancel(ctx)
		defer cancel()
		release() // the request ended
		select {
		case <-child.Done():
		case <-time.After(5 * time.Second):
			t.Fatal("a child did not end with the released context")
		}
		if !errors.Is(ctx.Err(), context.Canceled) {
			t.Fatal(ctx.Err())
		}
	})
}
