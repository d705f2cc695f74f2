// Package pgtest gives each test its own PostgreSQL database, cloned from a template that
// already has the postgis extension.
package pgtest
