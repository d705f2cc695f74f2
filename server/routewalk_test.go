package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"sort"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/store"
)

// TestRouteWalk walks every operation of server/openapi.json and, for every parameter (path,
// query and header) and every simple JSON body, sends malformed values: invalid UTF-8 (%FF),
// empty, huge and tiny numbers (1e308, 5e-324), -0, NaN, Inf, a very long string, a list with a
// trailing comma, and values of the wrong type. Every other parameter keeps the document's
// example, so the malformed value is the only thing wrong with the request. Each answer must be
// a 4xx with an RFC 9457 problem+json body, or a 2xx where the value is acceptable (an empty
// optional value is absent, -0 is a number), and never a 5xx. It runs on SQLite always and on
// PostGIS when the test database is set (forEachStore).
func TestRouteWalk(t *testing.T) {
	if testing.Short() {
		t.Skip("walks every route with malformed values")
	}
	var doc oaDoc
	if err := json.Unmarshal(openAPIDocument, &doc); err != nil {
		t.Fatal(err)
	}
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		w := &walker{t: t, e: e, doc: &doc, ids: walkIDs(t, e)}
		paths := make([]string, 0, len(doc.Paths))
		for p := range doc.Paths {
			paths = append(paths, p)
		}
		sort.Strings(paths)
		// Writes that change what later requests read (PUT, DELETE) go last, and on ids that do
		// not exist, so nothing the walk relies on is removed.
		for _, pass := range [][]string{{"get", "post"}, {"put", "delete"}} {
			for _, p := range paths {
				for _, m := range pass {
					if op, ok := doc.Paths[p][m]; ok {
						w.operation(strings.ToUpper(m), p, op)
					}
				}
			}
		}
		t.Logf("%d requests: %d answered 2xx, %d answered 4xx", w.sent, w.ok, w.refused)
	})
}

// oaDoc is the part of the OpenAPI document the walk reads.
type oaDoc struct {
	Paths      map[string]map[string]json.RawMessage `json:"paths"`
	Components struct {
		Parameters map[string]oaParam `json:"parameters"`
	} `json:"components"`
}

type oaParam struct {
	Ref      string          `json:"$ref"`
	Name     string          `json:"name"`
	In       string          `json:"in"`
	Required bool            `json:"required"`
	Example  json.RawMessage `json:"example"`
	Schema   struct {
		Type string   `json:"type"`
		Enum []string `json:"enum"`
	} `json:"schema"`
}

type oaOperation struct {
	Parameters  []oaParam `json:"parameters"`
	RequestBody *struct {
		Content map[string]struct {
			Example json.RawMessage `json:"example"`
		} `json:"content"`
	} `json:"requestBody"`
}

type walker struct {
	t                 *testing.T
	e                 *env
	doc               *oaDoc
	ids               map[string]string // path parameter → an id that exists
	sent, ok, refused int
}

// walkIDs are ids of things the demo basin installed, for path parameters of reads.
func walkIDs(t *testing.T, e *env) map[string]string {
	gs, err := e.st.ListGrids(context.Background(), store.GridFilter{})
	if err != nil || len(gs) == 0 {
		t.Fatalf("grids: %v (%d)", err, len(gs))
	}
	return map[string]string{
		"datasetId": e.dataset, "regionId": demobasin.RegionID, "gridId": gs[0].ID, "modelId": "gdh1",
		"jobId": "1", "planId": "walk-no-such-plan", "code": CodeInvalidParameter, "asset": "index.html",
		"parameter": PResidualDepth, "z": "3", "x": "1", "y": "5",
	}
}

// malformed are the values sent in place of a parameter's value, already query-escaped where
// they need it ("%FF" is invalid UTF-8 on purpose).
func malformed(example string) []string {
	return []string{
		"%FF", "", "1e308", "-1e308", "-0", "NaN", "Inf", "5e-324", "0x1p-2",
		strings.Repeat("9", 5000), url.QueryEscape(example + ","), url.QueryEscape(",,"),
		"true", url.QueryEscape("[1]"), url.QueryEscape("{}"), "%00", url.QueryEscape(example) + "%FF",
	}
}

func (w *walker) resolve(p oaParam) oaParam {
	if p.Ref != "" {
		return w.doc.Components.Parameters[strings.TrimPrefix(p.Ref, "#/components/parameters/")]
	}
	return p
}

func exampleText(raw json.RawMessage) string {
	if len(raw) == 0 {
		return ""
	}
	var s string
	if json.Unmarshal(raw, &s) == nil {
		return s
	}
	return string(raw)
}

func (w *walker) operation(method, path string, raw json.RawMessage) {
	var op oaOperation
	if err := json.Unmarshal(raw, &op); err != nil {
		w.t.Fatalf("%s %s: %v", method, path, err)
	}
	write := method == "PUT" || method == "DELETE"
	params := make([]oaParam, len(op.Parameters))
	for i, p := range op.Parameters {
		params[i] = w.resolve(p)
	}
	// base gives every parameter its valid value (escaped); the one under test is replaced.
	base := func(p oaParam) (string, bool) {
		if p.In == "path" {
			if write {
				return "walk-missing-" + p.Name, true
			}
			if v, ok := w.ids[p.Name]; ok {
				return url.PathEscape(v), true
			}
		}
		if !p.Required || p.In == "header" {
			return "", false
		}
		return url.QueryEscape(exampleText(p.Example)), true
	}
	var body []byte
	ctype := ""
	if op.RequestBody != nil {
		for ct, c := range op.RequestBody.Content {
			if strings.Contains(ct, "json") && len(c.Example) > 0 && (ctype == "" || ct == "application/json") {
				body, ctype = c.Example, ct
			}
		}
	}
	for i, p := range params {
		for _, bad := range malformed(exampleText(p.Example)) {
			target, hdr := path, map[string]string{}
			var query []string
			for j, q := range params {
				v, ok := base(q)
				if i == j {
					v, ok = bad, true
				}
				if !ok {
					continue
				}
				switch q.In {
				case "path":
					target = strings.Replace(target, "{"+q.Name+"}", v, 1)
				case "query":
					query = append(query, url.QueryEscape(q.Name)+"="+v)
				case "header":
					if u, err := url.QueryUnescape(v); err == nil {
						hdr[q.Name] = u
					}
				}
			}
			if len(query) > 0 {
				target += "?" + strings.Join(query, "&")
			}
			w.send(method, target, ctype, body, hdr, fmt.Sprintf("%s=%q", p.Name, bad))
		}
	}
	if body == nil {
		return
	}
	// The JSON body: malformed documents, and each top-level member of the example replaced.
	target := path
	for _, p := range params {
		if v, ok := base(p); ok && p.In == "path" {
			target = strings.Replace(target, "{"+p.Name+"}", v, 1)
		}
	}
	for _, b := range []string{"", "{", "null", "[]", "{}", "\xff", `{"type":1e309}`, "[1,]", strings.Repeat("[", 10000)} {
		w.send(method, target, ctype, []byte(b), nil, fmt.Sprintf("body %q", trunc([]byte(b))))
	}
	var obj map[string]json.RawMessage
	if json.Unmarshal(body, &obj) != nil {
		return
	}
	for k := range obj {
		for _, v := range []string{`"\ud800"`, `""`, `1e308`, `-0`, `5e-324`, `"NaN"`, `null`, `true`, `[]`, `{}`, `[1,2,3]`, `"` + strings.Repeat("x", 5000) + `"`} {
			m := make(map[string]json.RawMessage, len(obj))
			for k2, v2 := range obj {
				m[k2] = v2
			}
			m[k] = json.RawMessage(v)
			b, _ := json.Marshal(m)
			w.send(method, target, ctype, b, nil, fmt.Sprintf("body member %s=%s", k, trunc([]byte(v))))
		}
	}
}

func (w *walker) send(method, target, ctype string, body []byte, hdr map[string]string, what string) {
	w.t.Helper()
	var rd *bytes.Reader
	if body != nil {
		rd = bytes.NewReader(body)
	}
	var req *http.Request
	if rd != nil {
		req = httptest.NewRequest(method, "http://walk.test"+target, rd)
	} else {
		req = httptest.NewRequest(method, "http://walk.test"+target, nil)
	}
	if ctype != "" {
		req.Header.Set("Content-Type", ctype)
	}
	for k, v := range hdr {
		req.Header.Set(k, v)
	}
	req.Header.Set("Authorization", "Bearer "+w.e.editor)
	rec := httptest.NewRecorder()
	w.e.handler.ServeHTTP(rec, req)
	w.sent++
	code, ct := rec.Code, rec.Header().Get("Content-Type")
	switch {
	case code >= 500:
		w.t.Errorf("%s %s (%s): status %d: %s", method, target, what, code, trunc(rec.Body.Bytes()))
	case code >= 400:
		w.refused++
		if ct != "application/problem+json" {
			w.t.Errorf("%s %s (%s): status %d with Content-Type %q, want application/problem+json", method, trunc([]byte(target)), what, code, ct)
			return
		}
		var p Problem
		if err := json.Unmarshal(rec.Body.Bytes(), &p); err != nil || p.Status != code || p.Code == "" {
			w.t.Errorf("%s %s (%s): status %d with problem %s (%v)", method, trunc([]byte(target)), what, code, trunc(rec.Body.Bytes()), err)
		}
	case code >= 300:
		w.t.Errorf("%s %s (%s): status %d", method, trunc([]byte(target)), what, code)
	default:
		w.ok++
	}
}
