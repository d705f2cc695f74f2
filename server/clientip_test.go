package server

import (
	"net/http"
	"net/http/httptest"
	"net/netip"
	"testing"
)

// The client a request is accounted to. Header forms: X-Forwarded-For as reverse proxies
// write it (each appends the address it saw; common practice, no RFC), Forwarded per RFC 7239
// §4 and its examples in §7.1 ("for=192.0.2.43, for=198.51.100.17", quoted IPv6 with a port).
func TestClientAddr(t *testing.T) {
	proxies, err := ParseTrustedProxies([]string{"10.0.0.0/8", "2001:db8:ffff::1", " "})
	if err != nil {
		t.Fatal(err)
	}
	s := newServer(Deps{Config: Config{TrustedProxies: proxies}})
	plain := newServer(Deps{})
	for _, c := range []struct {
		name, remote string
		header       http.Header
		want, plain  string
	}{
		{"no proxy", "198.51.100.7:5555", nil, "198.51.100.7", "198.51.100.7"},
		{"untrusted peer's header ignored", "198.51.100.7:5555", http.Header{"X-Forwarded-For": {"203.0.113.9"}}, "198.51.100.7", "198.51.100.7"},
		{"trusted proxy, one hop", "10.1.2.3:443", http.Header{"X-Forwarded-For": {"203.0.113.9"}}, "203.0.113.9", "10.1.2.3"},
		{"forged left part skipped", "10.1.2.3:443", http.Header{"X-Forwarded-For": {"1.2.3.4, 203.0.113.9"}}, "203.0.113.9", "10.1.2.3"},
		{"two trusted hops", "10.1.2.3:443", http.Header{"X-Forwarded-For": {"203.0.113.9, 10.9.9.9"}}, "203.0.113.9", "10.1.2.3"},
		{"header lines in order", "10.1.2.3:443", http.Header{"X-Forwarded-For": {"1.2.3.4", "203.0.113.9"}}, "203.0.113.9", "10.1.2.3"},
		{"garbage ends the chain", "10.1.2.3:443", http.Header{"X-Forwarded-For": {"203.0.113.9, not-an-ip"}}, "10.1.2.3", "10.1.2.3"},
		{"trusted proxy without header", "10.1.2.3:443", nil, "10.1.2.3", "10.1.2.3"},
		{"Forwarded (RFC 7239 §7.1)", "10.1.2.3:443", http.Header{"Forwarded": {"for=192.0.2.43, for=198.51.100.17"}}, "198.51.100.17", "10.1.2.3"},
		{"Forwarded quoted IPv6 with port (RFC 7239 §6)", "10.1.2.3:443", http.Header{"Forwarded": {`for="[2001:db8:cafe::17]:4711";proto=https`}}, "2001:db8:cafe::17", "10.1.2.3"},
		{"X-Forwarded-For wins over Forwarded", "10.1.2.3:443", http.Header{"Forwarded": {"for=192.0.2.43"}, "X-Forwarded-For": {"203.0.113.9"}}, "203.0.113.9", "10.1.2.3"},
		{"IPv6 proxy address", "[2001:db8:ffff::1]:443", http.Header{"X-Forwarded-For": {"203.0.113.9"}}, "203.0.113.9", "2001:db8:ffff::1"},
		{"IPv4-mapped peer", "[::ffff:10.1.2.3]:443", http.Header{"X-Forwarded-For": {"203.0.113.9"}}, "203.0.113.9", "10.1.2.3"},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := httptest.NewRequest("GET", "/api", nil)
			r.RemoteAddr = c.remote
			for k, v := range c.header {
				r.Header[k] = v
			}
			if got := s.clientAddr(r); got != c.want {
				t.Errorf("behind trusted proxies: %q, want %q", got, c.want)
			}
			if got := plain.clientAddr(r); got != c.plain {
				t.Errorf("no trusted proxies: %q, want %q", got, c.plain)
			}
		})
	}
	for _, bad := range []string{"10.0.0.0/33", "proxy.example", "10.0.0"} {
		if _, err := ParseTrustedProxies([]string{bad}); err == nil {
			t.Errorf("ParseTrustedProxies(%q) accepted", bad)
		}
	}
	if p, _ := ParseTrustedProxies([]string{"10.1.2.3/8"}); len(p) != 1 || p[0] != netip.MustParsePrefix("10.0.0.0/8") {
		t.Errorf("prefix not masked: %v", p)
	}
}

// Behind a trusted proxy, two clients get a limit each; a client spoofing the header directly
// does not escape its own.
func TestRateLimitBehindProxy(t *testing.T) {
	proxies, _ := ParseTrustedProxies([]string{"10.0.0.0/8"})
	h := New(Deps{Config: Config{RateLimitPerMinute: 2, TrustedProxies: proxies}})
	get := func(remote, xff string) int {
		r := httptest.NewRequest("GET", "/api/models", nil)
		r.RemoteAddr = remote
		if xff != "" {
			r.Header.Set("X-Forwarded-For", xff)
		}
		w := httptest.NewRecorder()
		h.ServeHTTP(w, r)
		return w.Code
	}
	for i := range 2 {
		if c := get("10.0.0.1:1", "203.0.113.1"); c != 200 {
			t.Fatalf("client A request %d: %d", i, c)
		}
	}
	if c := get("10.0.0.1:1", "203.0.113.1"); c != http.StatusTooManyRequests {
		t.Errorf("client A third request: %d, want 429", c)
	}
	if c := get("10.0.0.1:1", "203.0.113.2"); c != 200 {
		t.Errorf("client B through the same proxy: %d, want 200 (its own limit)", c)
	}
	for i := range 2 {
		get("198.51.100.5:1", "203.0.113.50")
		_ = i
	}
	if c := get("198.51.100.5:1", "203.0.113.51"); c != http.StatusTooManyRequests {
		t.Errorf("direct client changing its X-Forwarded-For: %d, want 429 (keyed on its own address)", c)
	}
}
