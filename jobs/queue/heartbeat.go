package queue

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"os"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
)

// Liveness of the processes sharing one PostGIS queue (several replicas). River records in a
// job's attempted_by the id of each client that ran it, but keeps no sign of life per client;
// so every process names its River client itself (clientID) and writes a heartbeat row for it
// every Options.HeartbeatEvery. A job "running" under a client whose last heartbeat is older
// than Options.OwnerGone was left by a process that died, and is put back in the queue at once
// (or failed when its attempts are used up), instead of after jobs.RescueAfter. A running job
// of a live process is never touched, however long it runs (its own jobs.JobTimeout ends it);
// nor is one of a client with no heartbeat row (a process of an older version, during an
// upgrade): River's rescuer takes those after jobs.RescueAfter. The time compared is the
// database's (now() on write and on read), so clocks of the replicas do not matter.
const (
	DefaultHeartbeatEvery = 30 * time.Second
	DefaultOwnerGone      = 2 * time.Minute
)

// clientID names this process's River client: host, process id and a random part (River:
// at most 100 characters, unique per process).
func clientID() string {
	host, _ := os.Hostname()
	if len(host) > 40 {
		host = host[:40]
	}
	var b [6]byte
	_, _ = rand.Read(b[:])
	return fmt.Sprintf("%s_%d_%s", host, os.Getpid(), hex.EncodeToString(b[:]))
}

// heartbeats keeps the signs of life of the queue's clients.
type heartbeats interface {
	migrate(ctx context.Context) error
	beat(ctx context.Context, id string) error
	// seen returns when each client recorded gave its last sign of life.
	seen(ctx context.Context) (map[string]time.Time, error)
	forget(ctx context.Context, id string) error
}

// pgBeats keeps heartbeats in a table beside River's.
type pgBeats struct{ pool *pgxpool.Pool }

func (b pgBeats) migrate(ctx context.Context) error {
	_, err := b.pool.Exec(ctx, `CREATE TABLE IF NOT EXISTS ridgeflank_queue_client (
		client_id text PRIMARY KEY,
		seen_at timestamptz NOT NULL)`)
	return err
}

func (b pgBeats) beat(ctx context.Context, id string) error {
	_, err := b.pool.Exec(ctx, `INSERT INTO ridgeflank_queue_client (client_id, seen_at) VALUES ($1, now())
		ON CONFLICT (client_id) DO UPDATE SET seen_at = now()`, id)
	return err
}

func (b pgBeats) seen(ctx context.Context) (map[string]time.Time, error) {
	// Rows of clients gone for a day are dropped on the way (River's own rescuer has long
	// taken their jobs).
	if _, err := b.pool.Exec(ctx, `DELETE FROM ridgeflank_queue_client WHERE seen_at < now() - interval '1 day'`); err != nil {
		return nil, err
	}
	rows, err := b.pool.Query(ctx, `SELECT client_id, seen_at FROM ridgeflank_queue_client`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]time.Time{}
	for rows.Next() {
		var id string
		var at time.Time
		if err := rows.Scan(&id, &at); err != nil {
			return nil, err
		}
		out[id] = at
	}
	return out, rows.Err()
}

func (b pgBeats) forget(ctx context.Context, id string) error {
	_, err := b.pool.Exec(ctx, `DELETE FROM ridgeflank_queue_client WHERE client_id = $1`, id)
	return err
}
