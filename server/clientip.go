package server

import (
	"fmt"
	"net"
	"net/http"
	"net/netip"
	"strings"
)

// clientAddr is the address a request is accounted to (rate limits, the access log): the TCP
// peer, unless the peer is one of Config.TrustedProxies, in which case it is the nearest
// address in the forwarding chain that is not a trusted proxy — read from X-Forwarded-For
// (de facto standard, comma-separated, each proxy appending the address it saw) or, when that
// is absent, the for= elements of Forwarded (RFC 7239). The chain is walked from its right
// end, the part written by the trusted proxies themselves; anything further left was written
// by the client and could be forged, so it is used only past the last trusted hop. A request
// from a trusted proxy without a usable header is accounted to the proxy. Forwarding headers
// from any other peer are ignored: a client cannot choose its own rate-limit key.
func (s *server) clientAddr(r *http.Request) string {
	peer := peerAddr(r)
	if !peer.IsValid() {
		return r.RemoteAddr
	}
	if len(s.deps.Config.TrustedProxies) == 0 || !s.trusted(peer) {
		return peer.String()
	}
	chain := forwardedChain(r)
	for i := len(chain) - 1; i >= 0; i-- {
		if !s.trusted(chain[i]) {
			return chain[i].String()
		}
	}
	if len(chain) > 0 {
		return chain[0].String() // every hop a trusted proxy: the leftmost one
	}
	return peer.String()
}

func (s *server) trusted(a netip.Addr) bool {
	for _, p := range s.deps.Config.TrustedProxies {
		if p.Contains(a) {
			return true
		}
	}
	return false
}

// peerAddr is the TCP peer's address (IPv4-mapped IPv6 unmapped); the zero Addr when
// RemoteAddr does not parse (then nothing is trusted).
func peerAddr(r *http.Request) netip.Addr {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		host = r.RemoteAddr
	}
	a, err := netip.ParseAddr(host)
	if err != nil {
		return netip.Addr{}
	}
	return a.Unmap()
}

// forwardedChain is the forwarding chain of r, client first: X-Forwarded-For's addresses (all
// its header lines, in order), else Forwarded's for= values. An element that does not parse as
// an address (a name, "unknown", an obfuscated identifier) ends the chain there: nothing left
// of it can be placed.
func forwardedChain(r *http.Request) []netip.Addr {
	var raw []string
	if v := r.Header.Values("X-Forwarded-For"); len(v) > 0 {
		for _, line := range v {
			raw = append(raw, strings.Split(line, ",")...)
		}
	} else {
		for _, line := range r.Header.Values("Forwarded") {
			for _, elem := range strings.Split(line, ",") {
				for _, pair := range strings.Split(elem, ";") {
					k, v, ok := strings.Cut(strings.TrimSpace(pair), "=")
					if ok && strings.EqualFold(k, "for") {
						raw = append(raw, forwardedNode(v))
					}
				}
			}
		}
	}
	var out []netip.Addr
	for i := len(raw) - 1; i >= 0; i-- {
		a, err := netip.ParseAddr(strings.TrimSpace(raw[i]))
		if err != nil {
			break
		}
		out = append(out, a.Unmap())
	}
	// reverse: client first
	for i, j := 0, len(out)-1; i < j; i, j = i+1, j-1 {
		out[i], out[j] = out[j], out[i]
	}
	return out
}

// forwardedNode is the address of an RFC 7239 node: quotes, the brackets of an IPv6 address
// and a port removed ("[2001:db8::1]:4711" → "2001:db8::1", "192.0.2.60:80" → "192.0.2.60").
func forwardedNode(v string) string {
	v = strings.Trim(strings.TrimSpace(v), `"`)
	if strings.HasPrefix(v, "[") {
		if end := strings.IndexByte(v, ']'); end > 0 {
			return v[1:end]
		}
		return v
	}
	if host, _, err := net.SplitHostPort(v); err == nil {
		return host
	}
	return v
}

// ParseTrustedProxies reads a list of proxy addresses or CIDR prefixes for Config.TrustedProxies.
func ParseTrustedProxies(list []string) ([]netip.Prefix, error) {
	var out []netip.Prefix
	for _, s := range list {
		s = strings.TrimSpace(s)
		if s == "" {
			continue
		}
		if p, err := netip.ParsePrefix(s); err == nil {
			out = append(out, p.Masked())
			continue
		}
		a, err := netip.ParseAddr(s)
		if err != nil {
			return nil, fmt.Errorf("trusted proxy %q: give an IP address or a CIDR prefix such as 10.0.0.0/8", s)
		}
		a = a.Unmap()
		out = append(out, netip.PrefixFrom(a, a.BitLen()))
	}
	return out, nil
}
