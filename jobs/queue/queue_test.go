package queue

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"ridgeflank/jobs"
	"ridgeflank/store"
	_ "ridgeflank/store/postgis"
	_ "ridgeflank/store/sqlite"
	"ridgeflank/store/storetest"
)

// testStore opens a store of the given backend in a fresh directory (and, for PostGIS, a
// fresh database).
func testStore(t *testing.T, backend string) store.Store {
	t.Helper()
	return storetest.OpenStore(t, backend, t.TempDir())
}

// testQueue opens and migrates a queue on st; workers < 0 makes it insert-only.
func testQueue(t *testing.T, st store.Store, h jobs.Handlers, workers int) *Queue {
	t.Helper()
	q, err := Open(context.Background(), st, h, Options{Workers: workers, PollInterval: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { q.Close() })
	if err := q.Migrate(context.Background()); err != nil {
		t.Fatal(err)
	}
	return q
}

func waitState(t *testing.T, q *Queue, id int64, want jobs.State) jobs.Status {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for {
		st, err := q.Get(context.Background(), id)
		if err != nil {
			t.Fatal(err)
		}
		if st.State == want {
			return st
		}
		if time.Now().After(deadline) {
			t.Fatalf("job %d stuck in %s (want %s): %+v", id, st.State, want, st)
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// An accepted import survives a restart: it is inserted by a queue that runs no workers (as if
// the process died right after accepting it), then a new queue on the same database runs it to
// completion. Both backends go through the one constructor.
func TestImportSurvivesRestart(t *testing.T) {
	for _, backend := range []string{store.BackendSQLite, store.BackendPostGIS} {
		t.Run(backend, func(t *testing.T) {
			st := testStore(t, backend)
			survivesRestart(t, func(h jobs.Handlers, workers int) *Queue { return testQueue(t, st, h, workers) })
		})
	}
}

func survivesRestart(t *testing.T, open func(h jobs.Handlers, workers int) *Queue) {
	ctx := context.Background()
	q1 := open(jobs.Handlers{}, -1)
	id, err := q1.EnqueueImport(ctx, jobs.ImportArgs{GridID: "age-1", Path: "/nonexistent", Quantity: "seafloor_age", SHA256: "abc"})
	if err != nil {
		t.Fatal(err)
	}
	if st, _ := q1.Get(ctx, id); st.State != jobs.StateQueued {
		t.Fatalf("state after insert = %s, want queued", st.State)
	}

	var ran atomic.Int32
	release := make(chan struct{})
	h := jobs.Handlers{Import: func(ctx context.Context, a jobs.ImportArgs, p jobs.Progress) (any, error) {
		ran.Add(1)
		if a.GridID != "age-1" || a.Quantity != "seafloor_age" {
			return nil, jobs.Permanent(errors.New("args not preserved"))
		}
		p(0.5, "half way")
		<-release
		return map[string]any{"grid_id": a.GridID, "cells": 42}, nil
	}}
	q2 := open(h, 1)
	if err := q2.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = q2.Stop(context.Background()) })
	var once sync.Once
	t.Cleanup(func() { once.Do(func() { close(release) }) }) // runs before Stop

	// jobs.Progress is visible while the job runs.
	deadline := time.Now().Add(20 * time.Second)
	for {
		st, err := q2.Get(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if st.State == jobs.StateRunning && st.Progress == 0.5 && st.Message == "half way" {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("no progress seen: %+v", st)
		}
		time.Sleep(30 * time.Millisecond)
	}
	once.Do(func() { close(release) })
	st := waitState(t, q2, id, jobs.StateSucceeded)
	if st.Progress != 1 {
		t.Errorf("progress = %v, want 1", st.Progress)
	}
	var res struct {
		GridID string `json:"grid_id"`
		Cells  int    `json:"cells"`
	}
	if err := json.Unmarshal(st.Result, &res); err != nil || res.GridID != "age-1" || res.Cells != 42 {
		t.Errorf("result = %s (%v)", st.Result, err)
	}
	if n := ran.Load(); n != 1 {
		t.Errorf("handler ran %d times, want 1", n)
	}
}

// A permanent error, even wrapped further, ends the job after one attempt; its message is kept.
func TestPermanentFailure(t *testing.T) {
	ctx := context.Background()
	q := testQueue(t, testStore(t, store.BackendSQLite), jobs.Handlers{
		Import: func(ctx context.Context, a jobs.ImportArgs, p jobs.Progress) (any, error) {
			return nil, fmt.Errorf("reading %s: %w", a.GridID, jobs.Permanent(errors.New("not a grid file")))
		},
	}, 1)
	if err := q.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = q.Stop(context.Background()) })
	id, err := q.EnqueueImport(ctx, jobs.ImportArgs{GridID: "x"})
	if err != nil {
		t.Fatal(err)
	}
	st := waitState(t, q, id, jobs.StateFailed)
	if len(st.Errors) != 1 || st.Attempt != 1 || !strings.Contains(st.Errors[0], "reading x: not a grid file") {
		t.Errorf("status = %+v, want one attempt with its error", st)
	}
	if _, err := q.Get(ctx, id+1000); !errors.Is(err, jobs.ErrNotFound) {
		t.Errorf("Get(unknown) = %v, want ErrNotFound", err)
	}
	if err := q.Ready(ctx); err != nil {
		t.Errorf("Ready = %v", err)
	}
}

// otherStore is a store of a backend the queue does not know.
type otherStore struct{ store.Store }

func (otherStore) Backend() string { return "memory" }

func TestOpenRefusesUnknownStore(t *testing.T) {
	q, err := Open(context.Background(), otherStore{}, jobs.Handlers{}, Options{})
	if err == nil || q != nil || !strings.Contains(err.Error(), "memory") {
		t.Fatalf("Open(memory store) = %v, %v; want an error naming the backend", q, err)
	}
}
