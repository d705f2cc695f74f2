package store

import (
	"crypto/rand"
	"crypto/sha256"
	"encoding/base32"
	"encoding/hex"
	"fmt"
	"strings"
)

// Role is the permission level of an API token: reader < editor < admin.
type Role string

// Roles.
const (
	RoleReader Role = "reader" // read everything
	RoleEditor Role = "editor" // also create, change and delete regions, tracks, grids, datasets, models
	RoleAdmin  Role = "admin"  // also manage tokens
)

func (r Role) rank() int {
	switch r {
	case RoleReader:
		return 1
	case RoleEditor:
		return 2
	case RoleAdmin:
		return 3
	}
	return 0
}

// Valid reports whether r is one of the three roles.
func (r Role) Valid() bool { return r.rank() > 0 }

// Allows reports whether a token with role r may do what needs role need.
func (r Role) Allows(need Role) bool { return r.Valid() && need.Valid() && r.rank() >= need.rank() }

// ParseRole parses "reader", "editor" or "admin".
func ParseRole(s string) (Role, error) {
	r := Role(strings.ToLower(strings.TrimSpace(s)))
	if !r.Valid() {
		return "", fmt.Errorf("%w: role %q: want reader, editor or admin", ErrInvalid, s)
	}
	return r, nil
}

// TokenPrefix starts every API token secret, so that leaked tokens are easy to recognise.
const TokenPrefix = "rft_"

var lowerBase32 = base32.NewEncoding("abcdefghijklmnopqrstuvwxyz234567").WithPadding(base32.NoPadding)

// NewTokenSecret returns a new random token secret (TokenPrefix followed by 256 random bits in
// base32, 56 characters) and its hash as stored (HashToken).
func NewTokenSecret() (plaintext, sha256Hex string) {
	var b [32]byte
	if _, err := rand.Read(b[:]); err != nil {
		panic(err) // crypto/rand never fails on supported platforms
	}
	plaintext = TokenPrefix + lowerBase32.EncodeToString(b[:])
	return plaintext, HashToken(plaintext)
}

// HashToken is the stored form of a token secret: SHA-256 (FIPS 180-4) in lower-case hex.
// A fast unsalted hash is adequate because secrets carry 256 random bits. Authentication looks
// a token up by this hash, so no comparison ever runs on the secret itself: the time an index
// lookup takes can tell at most about leading bits of a SHA-256 image, which give nothing about
// a secret or another token's secret (preimage resistance), the property a constant-time
// comparison of secrets would provide.
func HashToken(plaintext string) string {
	h := sha256.Sum256([]byte(plaintext))
	return hex.EncodeToString(h[:])
}

// NewToken checks name and role and makes a token with a new id, the creation time (now) and
// a new secret (NewTokenSecret): plaintext goes to the caller once, sha256Hex to the store.
func NewToken(name string, role Role) (t Token, plaintext, sha256Hex string, err error) {
	if err := ValidateTokenName(name); err != nil {
		return Token{}, "", "", err
	}
	if !role.Valid() {
		return Token{}, "", "", fmt.Errorf("%w: role %q: want reader, editor or admin", ErrInvalid, role)
	}
	plaintext, sha256Hex = NewTokenSecret()
	return Token{ID: NewID(PrefixToken), Name: name, Role: role, CreatedAt: Now()}, plaintext, sha256Hex, nil
}
