package server

import (
	"encoding/json"
	"net/http"
	"os"
	"sort"
	"strings"
	"testing"
)

// A route walk over the API description: every operation whose security names only the
// bearer scheme (a write) refuses a request without a token (401) and one with a reader token
// (403); under --read-auth every operation that inherits the document's optional security
// refuses a request without a token (401) and admits a reader; operations declared public
// (security: []) stay open under --read-auth. The document is the contract (OpenAPI 3.1
// §4.8.10: an empty security array removes the requirement; {} in a list makes it optional).
func TestAuthRouteWalk(t *testing.T) {
	raw, err := os.ReadFile("openapi.json")
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Paths map[string]map[string]json.RawMessage `json:"paths"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	type op struct {
		method, path string
		security     *[]map[string][]string
	}
	var ops []op
	for p, m := range doc.Paths {
		for method, body := range m {
			switch method {
			case "get", "post", "put", "delete", "patch":
			default:
				continue
			}
			var o struct {
				Security *[]map[string][]string `json:"security"`
			}
			if err := json.Unmarshal(body, &o); err != nil {
				t.Fatal(err)
			}
			ops = append(ops, op{strings.ToUpper(method), p, o.Security})
		}
	}
	sort.Slice(ops, func(i, j int) bool { return ops[i].path+ops[i].method < ops[j].path+ops[j].method })
	if len(ops) < 40 {
		t.Fatalf("only %d operations in the API description", len(ops))
	}
	e := newEnv(t, "sqlite", Config{ReadAuth: true})
	fill := func(p string) string {
		r := strings.NewReplacer("{datasetId}", e.dataset, "{asset}", "favicon.ico", "{parameter}", "seafloor_age",
			"{z}", "0", "{x}", "0", "{y}", "0", "{code}", "not-found")
		p = r.Replace(p)
		for strings.Contains(p, "{") { // any other id: one no store holds
			i, j := strings.Index(p, "{"), strings.Index(p, "}")
			p = p[:i] + "walk-missing" + p[j+1:]
		}
		return p
	}
	writes, reads, public := 0, 0, 0
	for _, o := range ops {
		path := fill(o.path)
		name := o.method + " " + o.path
		var hdr []string
		if o.method != "GET" {
			hdr = []string{"Content-Type", "application/json", "If-Match", "*"}
		}
		body := func() *strings.Reader { return strings.NewReader("{}") }
		withTok := func(tok string) []string { return append(append([]string{}, hdr...), "Authorization", "Bearer "+tok) }
		switch {
		case o.security != nil && len(*o.security) == 0:
			public++
			if r := e.do(o.method, path, body(), hdr...); r.StatusCode == http.StatusUnauthorized || r.StatusCode == http.StatusForbidden {
				t.Errorf("%s is declared public but answered %d without a token under --read-auth", name, r.StatusCode)
			}
		case o.security != nil:
			writes++
			if r := e.do(o.method, path, body(), hdr...); r.StatusCode != http.StatusUnauthorized {
				t.Errorf("%s without a token: %d, want 401", name, r.StatusCode)
			}
			if r := e.do(o.method, path, body(), withTok(e.reader)...); r.StatusCode != http.StatusForbidden {
				t.Errorf("%s with a reader token: %d, want 403", name, r.StatusCode)
			}
			if r := e.do(o.method, path, body(), withTok(e.editor)...); r.StatusCode == http.StatusUnauthorized || r.StatusCode == http.StatusForbidden {
				t.Errorf("%s with an editor token: %d", name, r.StatusCode)
			}
		default:
			reads++
			if r := e.do(o.method, path, body(), hdr...); r.StatusCode != http.StatusUnauthorized {
				t.Errorf("%s without a token under --read-auth: %d, want 401", name, r.StatusCode)
			}
			if r := e.do(o.method, path, body(), withTok(e.reader)...); r.StatusCode == http.StatusUnauthorized || r.StatusCode == http.StatusForbidden {
				t.Errorf("%s with a reader token under --read-auth: %d", name, r.StatusCode)
			}
		}
	}
	t.Logf("%d write, %d read and %d public operations walked", writes, reads, public)
}
