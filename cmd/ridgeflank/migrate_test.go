package main

import (
	"strings"
	"testing"

	"ridgeflank/store/pgtest"
)

func TestMigrateSQLite(t *testing.T) {
	dir := t.TempDir()
	code, out, errOut := runCLI(t, nil, "migrate", "--data", dir, "--status")
	if code != 0 || !strings.Contains(out, "00001_init.sql") || !strings.Contains(out, "pending") {
		t.Fatalf("status on a new store: exit %d\n%s%s", code, out, errOut)
	}
	code, out, errOut = runCLI(t, nil, "migrate", "--data", dir)
	if code != 0 || !strings.Contains(out, "applied 00001_init.sql") {
		t.Fatalf("migrate: exit %d\n%s%s", code, out, errOut)
	}
	code, out, _ = runCLI(t, nil, "migrate", "--data", dir, "--status")
	if code != 0 || strings.Contains(out, "pending") || !strings.Contains(out, "applied") {
		t.Fatalf("status after migrate: exit %d\n%s", code, out)
	}
	// The environment names the data directory too (RIDGEFLANK_<FLAG>).
	code, out, _ = runCLI(t, map[string]string{"RIDGEFLANK_DATA": dir}, "migrate")
	if code != 0 || !strings.Contains(out, "sqlite schema is up to date") || strings.Contains(out, "applied 0") {
		t.Fatalf("second migrate: exit %d\n%s", code, out)
	}
}

func TestMigratePostGIS(t *testing.T) {
	url := pgtest.NewDB(t)
	dir := t.TempDir()
	code, out, errOut := runCLI(t, nil, "migrate", "--database-url", url, "--data", dir, "--status")
	if code != 0 || !strings.Contains(out, "pending") {
		t.Fatalf("status: exit %d\n%s%s", code, out, errOut)
	}
	code, out, errOut = runCLI(t, nil, "migrate", "--database-url", url, "--data", dir)
	if code != 0 || !strings.Contains(out, "applied 00001_init.sql") || !strings.Contains(out, "postgis") {
		t.Fatalf("migrate: exit %d\n%s%s", code, out, errOut)
	}
}

func TestMigrateBadURL(t *testing.T) {
	code, _, errOut := runCLI(t, nil, "migrate", "--database-url", "mysql://nope")
	if code != 2 || !strings.Contains(errOut, "postgres://") {
		t.Fatalf("exit %d, stderr %q; want 2 and a hint", code, errOut)
	}
}
