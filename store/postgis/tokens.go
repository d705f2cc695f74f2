package postgis

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

const tokenCols = `id, name, role, created_at, last_used_at, revoked_at`

// lastUsedResolution limits how often Authenticate writes the time of use.
const lastUsedResolution = time.Minute

func scanToken(row pgx.Row) (store.Token, error) {
	var t store.Token
	var role string
	if err := row.Scan(&t.ID, &t.Name, &role, &t.CreatedAt, &t.LastUsedAt, &t.RevokedAt); err != nil {
		return t, err
	}
	t.Role = store.Role(role)
	t.CreatedAt = t.CreatedAt.UTC()
	for _, p := range []**time.Time{&t.LastUsedAt, &t.RevokedAt} {
		if *p != nil {
			u := (*p).UTC()
			*p = &u
		}
	}
	return t, nil
}

// CreateToken implements store.Store.
func (s *Store) CreateToken(ctx context.Context, name string, role store.Role) (_ store.Token, _ string, err error) {
	defer unavailable(&err)
	t, plain, hash, err := store.NewToken(name, role)
	if err != nil {
		return store.Token{}, "", err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO api_tokens (id, name, role, token_sha256, created_at) VALUES ($1, $2, $3, $4, $5)`,
		t.ID, t.Name, string(t.Role), hash, t.CreatedAt)
	if err != nil {
		return store.Token{}, "", fmt.Errorf("creating token: %w", mapErr(err))
	}
	return t, plain, nil
}

// ListTokens implements store.Store.
func (s *Store) ListTokens(ctx context.Context) (_ []store.Token, err error) {
	defer unavailable(&err)
	rows, err := s.pool.Query(ctx, `SELECT `+tokenCols+` FROM api_tokens ORDER BY created_at, id`)
	if err != nil {
		return nil, fmt.Errorf("listing tokens: %w", err)
	}
	return collect(rows, scanToken)
}

// RevokeToken implements store.Store. Revoking a revoked token keeps the first revocation time.
func (s *Store) RevokeToken(ctx context.Context, id string) (err error) {
	defer unavailable(&err)
	tag, err := s.pool.Exec(ctx, `UPDATE api_tokens SET revoked_at = coalesce(revoked_at, $1) WHERE id = $2`, store.Now(), id)
	if err != nil {
		return fmt.Errorf("revoking token: %w", err)
	}
	if tag.RowsAffected() == 0 {
		return notFound("token", id)
	}
	return nil
}

// Authenticate implements store.Store.
func (s *Store) Authenticate(ctx context.Context, plaintext string) (_ store.Token, err error) {
	defer unavailable(&err)
	if plaintext == "" {
		return store.Token{}, fmt.Errorf("%w: no token", store.ErrUnauthorized)
	}
	t, err := scanToken(s.pool.QueryRow(ctx, `SELECT `+tokenCols+` FROM api_tokens WHERE token_sha256 = $1`, store.HashToken(plaintext)))
	if errors.Is(err, pgx.ErrNoRows) {
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
		if _, err := s.pool.Exec(ctx, `UPDATE api_tokens SET last_used_at = $1 WHERE id = $2`, now, t.ID); err != nil {
			// The token is valid; failing to note its use must not refuse the request.
			s.log.Warn("postgis store: recording token use", "token", t.ID, "err", err)
		} else {
			t.LastUsedAt = &now
		}
	}
	return t, nil
}
