package jobs

import (
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"

	"ridgeflank/store/pgtest"
)

func sqliteQueue(t *testing.T, path string, h Handlers, workers int) *Queue {
	t.Helper()
	db, err := OpenSQLite(path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	q, err := NewSQLite(db, h, Options{Workers: workers, PollInterval: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	if err := q.Migrate(context.Background()); err != nil {
		t.Fatal(err)
	}
	return q
}

func waitState(t *testing.T, q *Queue, id int64, want State) Status {
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

// An accepted import survives a restart: it is inserted by a queue that runs
// no workers (as if the process died right after accepting it), then a new
// queue on the same database file runs it to completion.
func TestSQLiteImportSurvivesRestart(t *testing.T) {
	path := filepath.Join(t.TempDir(), "store.db")
	survivesRestart(t, func(h Handlers, workers int) *Queue { return sqliteQueue(t, path, h, workers) })
}

// The same against PostgreSQL (River's pgx driver), in a fresh database.
func TestPostgresImportSurvivesRestart(t *testing.T) {
	dsn := pgtest.NewDB(t)
	pool, err := pgxpool.New(context.Background(), dsn)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(pool.Close)
	survivesRestart(t, func(h Handlers, workers int) *Queue {
		q, err := NewPostgres(pool, h, Options{Workers: workers, PollInterval: 100 * time.Millisecond})
		if err != nil {
			t.Fatal(err)
		}
		if err := q.Migrate(context.Background()); err != nil {
			t.Fatal(err)
		}
		return q
	})
}

func survivesRestart(t *testing.T, open func(h Handlers, workers int) *Queue) {
	ctx := context.Background()
	q1 := open(Handlers{}, -1)
	id, err := q1.EnqueueImport(ctx, ImportArgs{GridID: "age-1", Path: "/nonexistent", Quantity: "seafloor_age", SHA256: "abc"})
	if err != nil {
		t.Fatal(err)
	}
	if st, _ := q1.Get(ctx, id); st.State != StateQueued {
		t.Fatalf("state after insert = %s, want queued", st.State)
	}

	var ran atomic.Int32
	release := make(chan struct{})
	h := Handlers{Import: func(ctx context.Context, a ImportArgs, p Progress) (any, error) {
		ran.Add(1)
		if a.GridID != "age-1" || a.Quantity != "seafloor_age" {
			return nil, Permanent(errors.New("args not preserved"))
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

	// Progress is visible while the job runs.
	deadline := time.Now().Add(20 * time.Second)
	for {
		st, err := q2.Get(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if st.State == StateRunning && st.Progress == 0.5 && st.Message == "half way" {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("no progress seen: %+v", st)
		}
		time.Sleep(30 * time.Millisecond)
	}
	once.Do(func() { close(release) })
	st := waitState(t, q2, id, StateSucceeded)
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

func TestSQLitePermanentFailure(t *testing.T) {
	ctx := context.Background()
	q := sqliteQueue(t, filepath.Join(t.TempDir(), "s.db"), Handlers{
		Import: func(ctx context.Context, a ImportArgs, p Progress) (any, error) {
			return nil, Permanent(errors.New("not a grid file"))
		},
	}, 1)
	if err := q.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = q.Stop(context.Background()) })
	id, err := q.EnqueueImport(ctx, ImportArgs{GridID: "x"})
	if err != nil {
		t.Fatal(err)
	}
	st := waitState(t, q, id, StateFailed)
	if len(st.Errors) == 0 || st.Attempt != 1 {
		t.Errorf("status = %+v, want one attempt with its error", st)
	}
	if _, err := q.Get(ctx, id+1000); !errors.Is(err, ErrNotFound) {
		t.Errorf("Get(unknown) = %v, want ErrNotFound", err)
	}
	if err := q.Ready(ctx); err != nil {
		t.Errorf("Ready = %v", err)
	}
}
