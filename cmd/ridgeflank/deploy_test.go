package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// The container image and the deployment files are not built or started on the machines this
// project is tested on; this test reads them (common practice for container files, no source)
// and holds them against the binary: every flag and RIDGEFLANK_ variable they set is one that
// `serve` takes, the image builds with the Go version go.mod asks for, runs as a numeric
// non-root user and checks a health endpoint the server has, and the build context leaves local
// data and build outputs out.
func TestDeployFiles(t *testing.T) {
	root := filepath.Join("..", "..")
	read := func(name string) string {
		b, err := os.ReadFile(filepath.Join(root, name))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	var help bytes.Buffer
	if code := run(context.Background(), []string{"serve", "--help"}, &help, &help); code != 0 {
		t.Fatalf("serve --help: exit %d", code)
	}
	flags := map[string]bool{}
	for _, m := range regexp.MustCompile(`(?m)^  -([a-z0-9-]+)`).FindAllStringSubmatch(help.String(), -1) {
		flags[m[1]] = true
	}
	if !flags["addr"] || !flags["memory-budget"] {
		t.Fatalf("serve's flags not found in its help: %v", flags)
	}
	// Variables serve reads by name rather than from a flag (its help and serve.go say which).
	direct := map[string]bool{"RIDGEFLANK_S3_ACCESS_KEY_ID": true, "RIDGEFLANK_S3_SECRET_ACCESS_KEY": true}
	envOK := func(name string) bool {
		if direct[name] {
			return true
		}
		for f := range flags {
			if envName(f) == name {
				return true
			}
		}
		return false
	}

	for _, name := range []string{"Dockerfile", "deploy/compose.yaml", "deploy/kubernetes.yaml", "deploy/README.md"} {
		t.Run(name, func(t *testing.T) {
			text := read(name)
			vars := regexp.MustCompile(`\bRIDGEFLANK_[A-Z0-9_]+`).FindAllString(text, -1)
			for _, v := range vars {
				if !envOK(v) {
					t.Errorf("%s sets %s, which serve does not read", name, v)
				}
			}
			// Flags in argument lists: ["serve", "--addr", ...] and serve --flag on a command line.
			for _, m := range regexp.MustCompile(`"--([a-z0-9-]+)"|serve[^\n]*`).FindAllStringSubmatch(text, -1) {
				names := []string{m[1]}
				if m[1] == "" {
					names = nil
					for _, f := range regexp.MustCompile(`--([a-z0-9-]+)`).FindAllStringSubmatch(m[0], -1) {
						names = append(names, f[1])
					}
				}
				for _, f := range names {
					if !flags[f] && f != "help" {
						t.Errorf("%s passes --%s, which serve does not take", name, f)
					}
				}
			}
			if len(vars) == 0 && name != "deploy/README.md" {
				t.Errorf("%s sets no RIDGEFLANK_ variable: the pattern found nothing to check", name)
			}
		})
	}

	t.Run("Dockerfile stages", func(t *testing.T) {
		df := read("Dockerfile")
		froms := regexp.MustCompile(`(?m)^FROM\s+(\S+)`).FindAllStringSubmatch(df, -1)
		if len(froms) < 2 {
			t.Fatalf("want a multi-stage build, found %d FROM lines", len(froms))
		}
		for _, f := range froms {
			if strings.HasSuffix(f[1], ":latest") || !strings.Contains(f[1], ":") {
				t.Errorf("base image %s is not pinned to a tag", f[1])
			}
		}
		final := df[strings.LastIndex(df, "\nFROM "):]
		user := regexp.MustCompile(`(?m)^USER\s+(\d+)(?::(\d+))?\s*$`).FindStringSubmatch(final)
		if user == nil {
			t.Fatal("the final stage sets no numeric USER")
		}
		if uid, _ := strconv.Atoi(user[1]); uid == 0 {
			t.Error("the final stage runs as root")
		}
		hc := regexp.MustCompile(`(?s)HEALTHCHECK.*?CMD[^\n]*(/healthz|/readyz)`).FindStringSubmatch(final)
		if hc == nil {
			t.Error("the final stage has no HEALTHCHECK on /healthz or /readyz")
		} else if !strings.Contains(help.String(), hc[1]) {
			t.Errorf("the health check asks %s, which serve's help does not list", hc[1])
		}
		// The Go image is at least the version go.mod names.
		mod := regexp.MustCompile(`(?m)^go (\d+)\.(\d+)`).FindStringSubmatch(read("go.mod"))
		img := regexp.MustCompile(`(?m)^FROM golang:(\d+)\.(\d+)`).FindStringSubmatch(df)
		if mod == nil || img == nil {
			t.Fatalf("go.mod version %v, Go image %v", mod, img)
		}
		mMaj, _ := strconv.Atoi(mod[1])
		mMin, _ := strconv.Atoi(mod[2])
		iMaj, _ := strconv.Atoi(img[1])
		iMin, _ := strconv.Atoi(img[2])
		if iMaj < mMaj || iMaj == mMaj && iMin < mMin {
			t.Errorf("the image builds with Go %s.%s, go.mod asks for %s.%s", img[1], img[2], mod[1], mod[2])
		}
	})

	t.Run("build context", func(t *testing.T) {
		ignore := map[string]bool{}
		for _, l := range strings.Split(read(".dockerignore"), "\n") {
			if l = strings.TrimSpace(l); l != "" && !strings.HasPrefix(l, "#") {
				ignore[strings.Trim(l, "/")] = true
			}
		}
		for _, p := range []string{".git", "data", "build", "bin", "web/node_modules"} {
			if !ignore[p] {
				t.Errorf(".dockerignore does not leave out %s", p)
			}
		}
	})
}
