package store

import (
	"crypto/rand"
	"fmt"
)

// ID prefixes per entity, so that an id says what it names.
const (
	PrefixRegion  = "rg_"
	PrefixGrid    = "gr_"
	PrefixDataset = "ds_"
	PrefixTrack   = "tr_"
	PrefixModel   = "md_"
	PrefixPlan    = "pl_"
	PrefixToken   = "tk_"
)

// NewID returns prefix followed by 16 random base32 characters (80 bits).
func NewID(prefix string) string {
	var b [10]byte
	if _, err := rand.Read(b[:]); err != nil {
		panic(err) // crypto/rand never fails on supported platforms
	}
	return prefix + lowerBase32.EncodeToString(b[:])
}

// ValidateID checks a caller-supplied id: 1..MaxIDLen bytes of [A-Za-z0-9_-].
func ValidateID(id string) error {
	if id == "" || len(id) > MaxIDLen {
		return fmt.Errorf("%w: id must have 1 to %d characters", ErrInvalid, MaxIDLen)
	}
	for i := 0; i < len(id); i++ {
		c := id[i]
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_' || c == '-') {
			return fmt.Errorf("%w: id %q: only letters, digits, '_' and '-' are allowed", ErrInvalid, id)
		}
	}
	return nil
}
