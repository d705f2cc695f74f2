package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ridgeflank/store"
)

const tokenCols = `id, name, role, created_at, last_used_at, revoked_at`

// lastUsedResolution limits how often Authenticate writes the time of use.
const lastUsedResolution = time.Minute

func scanToken(sc scanner) (store.Token, error) {
	var t store.Token
	var created int64
	var used, revoked sql.NullInt64
	if err := sc.Scan(&t.ID, &t.Name, &t.Role, &created, &used, &revoked); err != nil {
		return t, err
	}
	t.CreatedAt = fromMicros(created)
	t.LastUsedAt, t.RevokedAt = optMicros(used), optMicros(revoked)
	return t, nil
}

// CreateToken implements store.Store.
func (s *Store) CreateToken(ctx context.Context, name string, role store.Role) (store.Token, string, error) {
	t, plain, hash, err := store.NewToken(name, role)
	if err != nil {
		return store.Token{}, "", err
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO api_tokens (id, name, role, token_sha256, created_at) VALUES (?, ?, ?, ?, ?)`,
			t.ID, t.Name, t.Role, hash, micros(t.CreatedAt))
		return mapErr(err)
	})
	if err != nil {
		return store.Token{}, "", fmt.Errorf("creating token: %w", err)
	}
	return t, plain, nil
}

// ListTokens implements store.Store.
func (s *Store) ListTokens(ctx context.Context) ([]store.Token, error) {
	rows, err := s.db.QueryContext(ctx, `SELECT `+tokenCols+` FROM api_tokens ORDER BY created_at, id`)
	if err != nil {
		return nil, fmt.Errorf("listing tokens: %w", err)
	}
	return collect(rows, scanToken)
}

// RevokeToken implements store.Store. Revoking a revoked token keeps the first revocation time.
func (s *Store) RevokeToken(ctx context.Context, id string) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE api_tokens SET revoked_at = coalesce(revoked_at, ?) WHERE id = ?`, micros(store.Now()), id)
		if err != nil {
			return err
		}
		if n, err := res.RowsAffected(); err != nil {
			return err
		} else if n == 0 {
			return notFound("token", id)
		}
		return nil
	})
}

// Authenticate implements store.Store.
func (s *Store) Authenticate(ctx context.Context, plaintext string) (store.Token, error) {
	if plaintext == "" {
		return store.Token{}, fmt.Errorf("%w: no token", store.ErrUnauthorized)
	}
	t, err := scanToken(s.db.QueryRowContext(ctx, `SELECT `+tokenCols+` FROM api_tokens WHERE token_sha256 = ?`, store.HashToken(plaintext)))
	if errors.Is(err, sql.ErrNoRows) {
		return store.Token{}, fmt.Errorf("%w: unknown token", store.ErrUnauthorized)
	}
	if err != nil {
		return store.Token{}, err
	}
	if t.RevokedAt != nil {
		return store.Token{}, fmt.Errorf("%w: token %s was revoked", store.ErrUnauthorized, t.ID)
	}
	now := store.Now()
	if t.LastUsedAt == nil || now.Sub(*t.LastUsedAt) >= lastUsedResolution {
		err := s.write(ctx, func(tx *sql.Tx) error {
			_, err := tx.ExecContext(ctx, `UPDATE api_tokens SET last_used_at = ? WHERE id = ?`, micros(now), t.ID)
			return err
		})
		if err != nil {
			// The token is valid; failing to note its use must not refuse the request.
			s.log.Warn("sqlite store: recording token use", "token", t.ID, "err", err)
		} else {
			t.LastUsedAt = &now
		}
	}
	return t, nil
}
