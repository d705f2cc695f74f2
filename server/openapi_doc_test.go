package server

import (
	"bytes"
	"encoding/json"
	"fmt"
	"sort"
	"strings"
	"testing"

	"github.com/santhosh-tekuri/jsonschema/v6"
)

// openAPIMethods are the operation keys of an OpenAPI 3.1 path item.
var openAPIMethods = []string{"get", "put", "post", "delete", "options", "head", "patch", "trace"}

// jsonPointerToken escapes one JSON Pointer reference token (RFC 6901, section 3).
func jsonPointerToken(s string) string {
	return strings.ReplaceAll(strings.ReplaceAll(s, "~", "~0"), "/", "~1")
}

// openAPIDocFaults lists, for the OpenAPI document raw, every operation without a non-empty
// description, every operation with parameters or a request body but no example in any of them,
// and every example that is not valid against the schema beside it (parameter example against
// the parameter's schema, media-type example or examples[*].value against the media type's
// schema, JSON Schema 2020-12 as OpenAPI 3.1 defines). Operations with neither parameters nor a
// request body (e.g. GET /healthz) are exempt from the example rule: there is nothing to show.
// Parameters and request bodies given as $ref to components are resolved.
func openAPIDocFaults(raw []byte) ([]string, error) {
	var doc map[string]any
	if err := json.Unmarshal(raw, &doc); err != nil {
		return nil, err
	}
	inst, err := jsonschema.UnmarshalJSON(bytes.NewReader(raw))
	if err != nil {
		return nil, err
	}
	const base = "urn:ridgeflank:openapi.json"
	c := jsonschema.NewCompiler()
	c.DefaultDraft(jsonschema.Draft2020)
	if err := c.AddResource(base, inst); err != nil {
		return nil, err
	}
	// resolve follows a local $ref ("#/components/...") and returns the target and its pointer.
	resolve := func(v map[string]any, ptr string) (map[string]any, string) {
		ref, ok := v["$ref"].(string)
		if !ok || !strings.HasPrefix(ref, "#/") {
			return v, ptr
		}
		var cur any = doc
		for _, tok := range strings.Split(ref[2:], "/") {
			tok = strings.ReplaceAll(strings.ReplaceAll(tok, "~1", "/"), "~0", "~")
			m, _ := cur.(map[string]any)
			cur = m[tok]
		}
		m, _ := cur.(map[string]any)
		return m, ref[1:]
	}
	var faults []string
	// check validates example against the schema at pointer ptr+"/schema".
	check := func(where string, obj map[string]any, ptr string, example any) {
		if _, ok := obj["schema"]; !ok {
			faults = append(faults, where+": example without a schema")
			return
		}
		sch, err := c.Compile(base + "#" + ptr + "/schema")
		if err != nil {
			faults = append(faults, fmt.Sprintf("%s: schema: %v", where, err))
			return
		}
		// Round-trip through JSON so numbers are what the validator expects.
		b, _ := json.Marshal(example)
		ex, err := jsonschema.UnmarshalJSON(bytes.NewReader(b))
		if err != nil {
			faults = append(faults, fmt.Sprintf("%s: example: %v", where, err))
			return
		}
		if err := sch.Validate(ex); err != nil {
			faults = append(faults, fmt.Sprintf("%s: example not valid against its schema: %v", where, err))
		}
	}
	// examplesOf checks the example(s) of a parameter or media type and counts them.
	examplesOf := func(where string, obj map[string]any, ptr string) int {
		n := 0
		if ex, ok := obj["example"]; ok {
			n++
			check(where, obj, ptr, ex)
		}
		exs, _ := obj["examples"].(map[string]any)
		for name, e := range exs {
			em, _ := e.(map[string]any)
			em, _ = resolve(em, "")
			if v, ok := em["value"]; ok {
				n++
				check(where+" examples."+name, obj, ptr, v)
			}
		}
		return n
	}
	paths, _ := doc["paths"].(map[string]any)
	for p, item := range paths {
		ops, _ := item.(map[string]any)
		for _, m := range openAPIMethods {
			op, ok := ops[m].(map[string]any)
			if !ok {
				continue
			}
			name := strings.ToUpper(m) + " " + p
			opPtr := "/paths/" + jsonPointerToken(p) + "/" + m
			if d, _ := op["description"].(string); strings.TrimSpace(d) == "" {
				faults = append(faults, name+": no description")
			}
			inputs, examples := 0, 0
			params, _ := op["parameters"].([]any)
			for i, prm := range params {
				pm, _ := prm.(map[string]any)
				pm, ptr := resolve(pm, fmt.Sprintf("%s/parameters/%d", opPtr, i))
				inputs++
				examples += examplesOf(fmt.Sprintf("%s parameter %v", name, pm["name"]), pm, ptr)
			}
			if rb, ok := op["requestBody"].(map[string]any); ok {
				rb, ptr := resolve(rb, opPtr+"/requestBody")
				inputs++
				content, _ := rb["content"].(map[string]any)
				for mt, media := range content {
					mm, _ := media.(map[string]any)
					examples += examplesOf(name+" body "+mt, mm, ptr+"/content/"+jsonPointerToken(mt))
				}
			}
			if inputs > 0 && examples == 0 {
				faults = append(faults, name+": no example in its parameters or request body")
			}
		}
	}
	sort.Strings(faults)
	return faults, nil
}

// Every operation of the published document has a description, and every operation that
// takes parameters or a body shows at least one example, each valid against its schema.
func TestOpenAPIOperationsDescribed(t *testing.T) {
	faults, err := openAPIDocFaults(openAPIDocument)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range faults {
		t.Error(f)
	}
}

// The check finds what it should: a missing description, a missing example and an example
// breaking its schema, each in a small document written out here.
func TestOpenAPIOperationsDescribedBites(t *testing.T) {
	tests := []struct {
		name, doc, want string
	}{
		{"no description", `{"paths":{"/a":{"get":{"responses":{}}}}}`, "GET /a: no description"},
		{"blank description", `{"paths":{"/a":{"get":{"description":"  "}}}}`, "GET /a: no description"},
		{"no example", `{"paths":{"/a":{"get":{"description":"d","parameters":[{"name":"q","in":"query","schema":{"type":"string"}}]}}}}`,
			"GET /a: no example in its parameters or request body"},
		{"no body example", `{"paths":{"/a":{"post":{"description":"d","requestBody":{"content":{"application/json":{"schema":{"type":"object"}}}}}}}}`,
			"POST /a: no example in its parameters or request body"},
		{"example against its schema", `{"paths":{"/a":{"get":{"description":"d","parameters":[{"$ref":"#/components/parameters/n"}]}}},
			"components":{"parameters":{"n":{"name":"n","in":"query","schema":{"type":"number","maximum":300},"example":301}}}}`,
			"GET /a parameter n: example not valid against its schema"},
		{"named examples checked", `{"paths":{"/a":{"post":{"description":"d","requestBody":{"content":{"application/json":{"schema":{"type":"object","required":["id"]},"examples":{"x":{"value":{}}}}}}}}}}`,
			"POST /a body application/json examples.x: example not valid against its schema"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			faults, err := openAPIDocFaults([]byte(tc.doc))
			if err != nil {
				t.Fatal(err)
			}
			found := false
			for _, f := range faults {
				found = found || strings.HasPrefix(f, tc.want)
			}
			if !found {
				t.Errorf("faults %q, want one starting %q", faults, tc.want)
			}
		})
	}
	t.Run("exempt without inputs", func(t *testing.T) {
		faults, err := openAPIDocFaults([]byte(`{"paths":{"/healthz":{"get":{"description":"liveness"}}}}`))
		if err != nil {
			t.Fatal(err)
		}
		if len(faults) != 0 {
			t.Errorf("faults %q, want none", faults)
		}
	})
}
