package main

import (
	"bufio"
	"context"
	"io"
	"net/http"
	"strings"
	"testing"
	"time"
)

// startServe runs `ridgeflank serve` on a free loopback port and returns its
// base URL, the printed write token, the lines printed before listening, and
// a stop function that cancels (as SIGINT would) and returns the exit status.
func startServe(t *testing.T, dataDir string) (base, token string, lines []string, stop func() int) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	pr, pw := io.Pipe()
	done := make(chan int, 1)
	go func() {
		done <- run(ctx, []string{"serve", "--addr", "127.0.0.1:0", "--data", dataDir, "--log-level", "error"}, pw, io.Discard)
		pw.Close()
	}()
	sc := bufio.NewScanner(pr)
	deadline := time.AfterFunc(60*time.Second, func() { pw.CloseWithError(io.ErrUnexpectedEOF) })
	defer deadline.Stop()
	for sc.Scan() {
		line := sc.Text()
		lines = append(lines, line)
		if strings.HasPrefix(strings.TrimSpace(line), "rft_") {
			token = strings.TrimSpace(line)
		}
		if i := strings.Index(line, "listening on "); i >= 0 {
			base = strings.Fields(line[i+len("listening on "):])[0]
			break
		}
	}
	if base == "" {
		cancel()
		t.Fatalf("serve did not start: %q", lines)
	}
	go io.Copy(io.Discard, pr)
	return base, token, lines, func() int { cancel(); return <-done }
}

func TestServeLoopbackTokenDemoAndShutdown(t *testing.T) {
	dir := t.TempDir()
	base, tok, lines, stop := startServe(t, dir)
	if !strings.Contains(strings.Join(lines, "\n"), "demo dataset quillon-basin-synthetic") {
		t.Errorf("first start did not load the demo basin: %q", lines)
	}
	if tok == "" {
		t.Fatalf("no loopback token printed: %q", lines)
	}
	resp, err := http.Get(base + "/readyz")
	if err != nil || resp.StatusCode != 200 {
		t.Fatalf("readyz: %v %v", err, resp)
	}
	post := func(token string) int {
		body := `{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[-145,-30],[-144,-30],[-144,-29],[-145,-30]]]},"properties":{"name":"from the page"}}`
		req, _ := http.NewRequest("POST", base+"/api/regions", strings.NewReader(body))
		req.Header.Set("Content-Type", "application/geo+json")
		if token != "" {
			req.Header.Set("Authorization", "Bearer "+token)
		}
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		return resp.StatusCode
	}
	if got := post(""); got != 401 {
		t.Errorf("write without token: %d, want 401", got)
	}
	if got := post(tok); got != 201 {
		t.Errorf("write with the start-up token: %d, want 201", got)
	}
	if code := stop(); code != 0 {
		t.Errorf("exit status %d after cancel, want 0", code)
	}

	// Second start: no demo reload, the old start-up token is revoked.
	base, tok2, lines, stop := startServe(t, dir)
	defer stop()
	if strings.Contains(strings.Join(lines, "\n"), "demo dataset") {
		t.Errorf("second start reloaded the demo: %q", lines)
	}
	if tok2 == "" || tok2 == tok {
		t.Errorf("second start token %q (first %q)", tok2, tok)
	}
	if got := post(tok); got != 401 {
		t.Errorf("old start-up token: %d, want 401", got)
	}
}

func TestParseBytes(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want int64
		ok   bool
	}{
		{"512MiB", 512 << 20, true}, // IEC 80000-13 binary prefix: Mi = 2^20
		{"2GB", 2e9, true},          // SI prefix: G = 10^9
		{"1.5 GiB", 3 << 29, true},
		{"1048576", 1 << 20, true},
		{"64m", 64 << 20, true},
		{"", 0, false},
		{"lots", 0, false},
		{"12XB", 0, false},
		{"-5MB", 0, false},
	} {
		t.Run(tc.in, func(t *testing.T) {
			got, err := parseBytes(tc.in)
			if (err == nil) != tc.ok || got != tc.want {
				t.Fatalf("parseBytes(%q) = %d, %v; want %d (ok=%v)", tc.in, got, err, tc.want, tc.ok)
			}
		})
	}
}
