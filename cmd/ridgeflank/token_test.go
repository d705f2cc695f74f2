package main

import (
	"context"
	"encoding/json"
	"strings"
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/sqlite"
)

func TestTokenLifecycle(t *testing.T) {
	dir := t.TempDir()
	code, out, errOut := runCLI(t, nil, "token", "create", "--role", "editor", "--name", "survey laptop", "--data", dir)
	secret := strings.TrimSpace(out)
	if code != 0 || strings.Count(out, "\n") != 1 || !strings.HasPrefix(secret, store.TokenPrefix) || !strings.Contains(errOut, "not shown again") {
		t.Fatalf("create: exit %d, stdout %q, stderr %q", code, out, errOut)
	}
	s, err := sqlite.Open(context.Background(), store.Config{DataDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	tok, err := s.Authenticate(context.Background(), secret)
	s.Close()
	if err != nil || tok.Role != store.RoleEditor || tok.Name != "survey laptop" {
		t.Fatalf("the printed secret does not authenticate: %+v, %v", tok, err)
	}

	code, out, _ = runCLI(t, nil, "token", "list", "--format", "json", "--data", dir)
	var list []map[string]any
	if code != 0 || json.Unmarshal([]byte(out), &list) != nil || len(list) != 1 || list[0]["role"] != "editor" || list[0]["revoked_at"] != nil {
		t.Fatalf("list: exit %d\n%s", code, out)
	}
	if strings.Contains(out, secret) {
		t.Fatal("list shows the secret")
	}
	id := list[0]["id"].(string)
	code, out, errOut = runCLI(t, nil, "token", "revoke", id, "--data", dir)
	if code != 0 || !strings.Contains(out, "revoked") {
		t.Fatalf("revoke: exit %d, %q %q", code, out, errOut)
	}
	code, out, _ = runCLI(t, nil, "token", "list", "--data", dir)
	if code != 0 || !strings.Contains(out, "revoked") || !strings.Contains(out, "survey laptop") {
		t.Fatalf("list table after revoke: exit %d\n%s", code, out)
	}
}

func TestTokenBadUsage(t *testing.T) {
	dir := t.TempDir()
	for _, args := range [][]string{
		{"token"},
		{"token", "mint"},
		{"token", "create", "--name", "x", "--data", dir},
		{"token", "create", "--role", "root", "--name", "x", "--data", dir},
		{"token", "create", "--role", "reader", "--name", "   ", "--data", dir},
		{"token", "revoke", "--data", dir},
		{"token", "revoke", "tk_unknown", "--data", dir},
		{"token", "list", "--format", "xml", "--data", dir},
	} {
		code, out, errOut := runCLI(t, nil, args...)
		if code != 2 || errOut == "" || strings.HasPrefix(out, store.TokenPrefix) {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want 2 and a message", args, code, out, errOut)
		}
	}
}
