package server

import (
	"bytes"
	"encoding/json"
	"net"
	"net/http"
	"strconv"
	"strings"
	"sync"

	"ridgeflank/numjson"
)

// jsonFloat encodes NaN and ±Inf as null (JSON has no such numbers), with numjson's digits.
type jsonFloat = numjson.Float

// roundSig keeps numjson.Digits significant digits.
func roundSig(v float64) float64 { return numjson.Round(v) }

func floats(v []float64) []jsonFloat { return numjson.Floats(v) }

// jsonBuffers are writeJSON's buffers, reused (up to 1 MiB kept each: larger answers are rare).
var jsonBuffers = sync.Pool{New: func() any { return new(bytes.Buffer) }}

// writeJSON writes v with the given media type and status.
func writeJSON(w http.ResponseWriter, status int, mediaType string, v any) error {
	buf := jsonBuffers.Get().(*bytes.Buffer)
	defer func() {
		if buf.Cap() <= 1<<20 {
			buf.Reset()
			jsonBuffers.Put(buf)
		}
	}()
	// Gridded values (large answers) are written straight to w rather than through encoding/json.
	var grids []*gridValues
	if sv, ok := v.(streamedValues); ok {
		grids = sv.valueGrids()
		defer armValues(grids)()
	}
	switch c := v.(type) {
	case coverage:
		b, err := c.appendJSON(buf.AvailableBuffer())
		if err != nil {
			return err
		}
		buf.Write(b)
	case *coverage:
		b, err := c.appendJSON(buf.AvailableBuffer())
		if err != nil {
			return err
		}
		buf.Write(b)
	default:
		enc := json.NewEncoder(buf)
		enc.SetEscapeHTML(false)
		if err := enc.Encode(v); err != nil {
			return err
		}
	}
	if mediaType == "" {
		mediaType = "application/json"
	}
	h := w.Header()
	h.Set("Content-Type", mediaType)
	if len(grids) > 0 && grids[0].token != nil { // values spliced in while writing: length unknown
		w.WriteHeader(status)
		return writeSpliced(w, buf.Bytes(), grids)
	}
	// A stated length: net/http would otherwise send a body over 2 KiB in chunks.
	h.Set("Content-Length", strconv.Itoa(buf.Len()))
	w.WriteHeader(status)
	_, err := w.Write(buf.Bytes())
	return err
}

// link is an OGC API link object.
type link struct {
	Href  string `json:"href"`
	Rel   string `json:"rel"`
	Type  string `json:"type,omitempty"`
	Title string `json:"title,omitempty"`
}

// baseURL is the absolute URL prefix for links.
func (s *server) baseURL(r *http.Request) string {
	if s.deps.Config.PublicURL != "" {
		return strings.TrimSuffix(s.deps.Config.PublicURL, "/")
	}
	if !s.trustedHost(r.Host) {
		return "" // root-relative links: RFC 3986 §4.2 relative references resolve against the request
	}
	scheme := "http"
	if r.TLS != nil {
		scheme = "https"
	}
	return scheme + "://" + r.Host
}

// trustedHost reports whether a Host header may make absolute links: a loopback name or
// address, or one of Config.TrustedHosts (compared without the port, case-insensitively).
func (s *server) trustedHost(hostport string) bool {
	host := hostport
	if h, _, err := net.SplitHostPort(hostport); err == nil {
		host = h
	}
	host = strings.ToLower(strings.Trim(host, "[]"))
	if host == "localhost" {
		return true
	}
	if ip := net.ParseIP(host); ip != nil && ip.IsLoopback() {
		return true
	}
	for _, t := range s.deps.Config.TrustedHosts {
		if strings.EqualFold(strings.TrimSpace(t), host) {
			return true
		}
	}
	return false
}

// decodeJSON reads a JSON body strictly (unknown fields are refused).
func decodeJSON(r *http.Request, v any) error {
	ct := r.Header.Get("Content-Type")
	if ct != "" && !strings.Contains(ct, "json") {
		return problem(CodeUnsupportedMedia, "expected a JSON body, got Content-Type %q", ct)
	}
	dec := json.NewDecoder(r.Body)
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		var mbe *http.MaxBytesError
		if asMaxBytes(err, &mbe) {
			return err
		}
		return problem(CodeBadRequest, "the JSON body could not be read: %v", err).withCause(err)
	}
	return nil
}
