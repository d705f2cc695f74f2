// Package pgtest gives each test its own PostgreSQL database, cloned from a template that
// already has the postgis extension (NewDB, on the shared test server), or its own PostgreSQL
// server (NewCluster: initdb into the test's temporary directory, a private port and socket
// directory) that a fault test may stop and start without touching the shared one.
package pgtest
