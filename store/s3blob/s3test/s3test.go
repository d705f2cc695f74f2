// Package s3test runs an S3-compatible server on a loopback port for tests, with one bucket,
// and records every request it receives. Two kinds:
//
//   - Start: gofakes3, in memory and in process. It refuses (403) any request that is not
//     signed with its access key id, so a test learns whether a client (the SDK, or GDAL's
//     /vsis3/) really used the configured credentials; it checks no signature (gofakes3 does
//     not).
//   - StartSeaweed: a SeaweedFS server (a separate process) behind a recording proxy. Its S3
//     gateway checks the AWS Signature Version 4 of every request itself.
package s3test

import (
	"crypto/rand"
	"encoding/hex"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"

	"github.com/johannesboyne/gofakes3"
	"github.com/johannesboyne/gofakes3/backend/s3mem"

	"ridgeflank/store"
)

// Request is one request the server received.
type Request struct {
	Method, Path, Query, Range string
	Status                     int
}

// Server is a running test server.
type Server struct {
	Kind            string // KindFake or KindSeaweed
	URL             string // http://127.0.0.1:port
	Bucket          string
	AccessKeyID     string
	SecretAccessKey string

	mu       sync.Mutex
	requests []Request
}

// Start starts a gofakes3 server with one empty bucket named bucket; it stops when the test ends.
// When no server can be started the test is skipped with the reason.
func Start(t testing.TB, bucket string) *Server {
	t.Helper()
	be := s3mem.New()
	if err := be.CreateBucket(bucket); err != nil {
		t.Skipf("S3-compatible test server: cannot create bucket: %v", err)
	}
	faker := gofakes3.New(be, gofakes3.WithLogger(gofakes3.DiscardLog()))
	s := &Server{Kind: KindFake, Bucket: bucket, AccessKeyID: "RFTEST" + randHex(8), SecretAccessKey: "rf-secret-" + randHex(16)}
	s.start(t, faker.Server(), true)
	return s
}

// start serves inner on a loopback port, recording each request; with checkKey it refuses
// (403) requests whose Authorization header does not carry s's access key id.
func (s *Server) start(t testing.TB, inner http.Handler, checkKey bool) {
	h := http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		rec := &statusRecorder{ResponseWriter: w, status: 200}
		if checkKey && !strings.Contains(r.Header.Get("Authorization"), "Credential="+s.AccessKeyID+"/") {
			rec.WriteHeader(http.StatusForbidden)
		} else {
			inner.ServeHTTP(rec, r)
		}
		s.mu.Lock()
		s.requests = append(s.requests, Request{Method: r.Method, Path: r.URL.Path, Query: r.URL.RawQuery, Range: r.Header.Get("Range"), Status: rec.status})
		s.mu.Unlock()
	})
	srv := httptest.NewUnstartedServer(h)
	srv.Start() // listens on 127.0.0.1
	t.Cleanup(srv.Close)
	s.URL = srv.URL
}

// Config returns the grid store URL (s3://bucket/prefix) and client settings for the server.
func (s *Server) Config(prefix string) (string, store.ObjectStoreConfig) {
	return "s3://" + s.Bucket + "/" + prefix, store.ObjectStoreConfig{
		Endpoint: s.URL, Region: "us-east-1", AccessKeyID: s.AccessKeyID, SecretAccessKey: store.Secret(s.SecretAccessKey),
	}
}

// Requests returns the requests received so far.
func (s *Server) Requests() []Request {
	s.mu.Lock()
	defer s.mu.Unlock()
	return append([]Request(nil), s.requests...)
}

type statusRecorder struct {
	http.ResponseWriter
	status int
}

func (r *statusRecorder) WriteHeader(code int) {
	r.status = code
	r.ResponseWriter.WriteHeader(code)
}

func randHex(n int) string {
	b := make([]byte, n)
	_, _ = rand.Read(b)
	return strings.ToUpper(hex.EncodeToString(b))
}
