package s3test

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net"
	"net/http/httputil"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/aws/aws-sdk-go-v2/aws"
	"github.com/aws/aws-sdk-go-v2/credentials"
	"github.com/aws/aws-sdk-go-v2/service/s3"
)

// EnvWeed names the environment variable that points at a SeaweedFS server binary (weed).
// When it is set, StartSeaweed fails a test whose server cannot be run instead of skipping
// it: make test sets it to the binary that make deps-test built.
const EnvWeed = "RIDGEFLANK_TEST_WEED"

// weedStartTimeout bounds the wait for a fresh server to store an object (measured: about
// 11 s on a loaded 2-core machine, most of it the filer joining the master; generous here).
const weedStartTimeout = 90 * time.Second

// StartSeaweed gives the test an empty bucket on a SeaweedFS server: master, volume server,
// filer and S3 gateway in one process (`weed server`), on loopback ports, in a temporary
// directory, with one identity whose access key the S3 gateway requires on every request (it
// checks each AWS Signature Version 4). The process is started on the first call and shared by
// the test binary's later calls (it takes about 10 s to store its first object); each call
// gets its own bucket, named bucket plus a number, and its own recording proxy in front, so
// Requests works as for Start. A TestMain calls StopSeaweed after m.Run; should a test binary
// not, the kernel ends the server with the binary (its temporary directory stays).
//
// The binary is the one EnvWeed names, else build/tools/weed of the module (make deps-test
// builds it), else weed on PATH. Without one the test is skipped, naming what is missing;
// with EnvWeed set, a missing or failing binary fails the test.
func StartSeaweed(t testing.TB, bucket string) *Server {
	t.Helper()
	bin, required, why := weedBinary()
	if bin == "" {
		if required {
			t.Fatalf("SeaweedFS server: %s", why)
		}
		t.Skipf("SeaweedFS server binary (weed) not available, S3 tests against it skipped: %s", why)
	}
	w, err := sharedWeed(t, bin)
	if err != nil {
		t.Fatalf("SeaweedFS server (%s): %v", bin, err)
	}
	s := &Server{Kind: KindSeaweed, Bucket: fmt.Sprintf("%s-%d", bucket, w.buckets.Add(1)), AccessKeyID: w.accessKeyID, SecretAccessKey: w.secretAccessKey}
	ctx, cancel := context.WithTimeout(context.Background(), weedStartTimeout)
	defer cancel()
	if err := weedReady(ctx, w.endpoint, s, nil); err != nil {
		t.Fatalf("SeaweedFS server: bucket %s: %v", s.Bucket, err)
	}
	target, _ := url.Parse(w.endpoint)
	proxy := httputil.NewSingleHostReverseProxy(target)
	// The proxy passes the client's Host header on unchanged (its Director leaves req.Host
	// alone): the signature covers it.
	s.start(t, proxy, false)
	return s
}

// StopSeaweed stops the shared SeaweedFS server, if one was started, and removes its files.
func StopSeaweed() {
	weedShared.mu.Lock()
	defer weedShared.mu.Unlock()
	if w := weedShared.w; w != nil {
		w.stop()
		weedShared.w = nil
	}
}

// weedProc is a running server.
type weedProc struct {
	endpoint                     string
	accessKeyID, secretAccessKey string
	buckets                      atomic.Int64
	stop                         func()
}

var weedShared struct {
	mu  sync.Mutex
	w   *weedProc
	err error // why it could not be started (not retried)
}

func sharedWeed(t testing.TB, bin string) (*weedProc, error) {
	weedShared.mu.Lock()
	defer weedShared.mu.Unlock()
	if weedShared.w != nil || weedShared.err != nil {
		return weedShared.w, weedShared.err
	}
	t0 := time.Now()
	var w *weedProc
	var err error
	for attempt := 0; attempt < 3; attempt++ { // a port picked free may be taken before weed binds it
		if w, err = startWeed(bin); err == nil || !errors.Is(err, errPortTaken) {
			break
		}
	}
	if err != nil {
		weedShared.err = err
		return nil, err
	}
	t.Logf("SeaweedFS server started (a bucket created, an object stored and read) in %s", time.Since(t0).Round(10*time.Millisecond))
	weedShared.w = w
	return w, nil
}

// KindFake and KindSeaweed name the two servers (Server.Kind).
const (
	KindFake    = "gofakes3"
	KindSeaweed = "seaweedfs"
)

// Each runs fn as one subtest per server kind (named by Kind), each with an empty bucket named
// bucket (the SeaweedFS one with a number appended: StartSeaweed). The SeaweedFS subtest is skipped, as StartSeaweed says, where no
// binary is available.
func Each(t *testing.T, bucket string, fn func(t *testing.T, srv *Server)) {
	t.Helper()
	for _, kind := range []string{KindFake, KindSeaweed} {
		t.Run(kind, func(t *testing.T) {
			var srv *Server
			if kind == KindFake {
				srv = Start(t, bucket)
			} else {
				srv = StartSeaweed(t, bucket)
			}
			fn(t, srv)
		})
	}
}

var weedOnce struct {
	sync.Once
	bin, why string
	required bool
}

// weedBinary finds the binary once per test process.
func weedBinary() (bin string, required bool, why string) {
	w := &weedOnce
	w.Do(func() {
		if p := os.Getenv(EnvWeed); p != "" {
			w.required = true
			if fi, err := os.Stat(p); err != nil || fi.IsDir() || fi.Mode()&0o111 == 0 {
				w.why = fmt.Sprintf("%s=%s is not an executable file (make deps-test builds it)", EnvWeed, p)
				return
			}
			w.bin = p
			return
		}
		if root := moduleRoot(); root != "" {
			p := filepath.Join(root, "build", "tools", "weed")
			if fi, err := os.Stat(p); err == nil && !fi.IsDir() {
				w.bin = p
				return
			}
			if b, err := os.ReadFile(p + ".unavailable"); err == nil {
				w.why = "make deps-test could not build it: " + strings.TrimSpace(string(b))
				return
			}
		}
		if p, err := exec.LookPath("weed"); err == nil {
			w.bin = p
			return
		}
		w.why = "no " + EnvWeed + ", no build/tools/weed and no weed on PATH (make deps-test builds build/tools/weed)"
	})
	return w.bin, w.required, w.why
}

// moduleRoot is the directory holding go.mod, from the working directory up ("" if none).
func moduleRoot() string {
	dir, err := os.Getwd()
	if err != nil {
		return ""
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		up := filepath.Dir(dir)
		if up == dir {
			return ""
		}
		dir = up
	}
}

var errPortTaken = errors.New("port taken")

// startWeed runs one server and waits until its S3 gateway stores an object.
func startWeed(bin string) (_ *weedProc, err error) {
	dir, err := os.MkdirTemp("", "rf-weed-")
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			os.RemoveAll(dir)
		}
	}()
	w := &weedProc{accessKeyID: "RFWEED" + randHex(7), secretAccessKey: "rf-weed-secret-" + randHex(16)}
	// The S3 identities (SeaweedFS's -s3.config JSON): one identity with every action; no
	// anonymous identity, so unsigned requests are refused.
	conf, _ := json.Marshal(map[string]any{"identities": []any{map[string]any{
		"name":        "ridgeflank-test",
		"credentials": []any{map[string]string{"accessKey": w.accessKeyID, "secretKey": w.secretAccessKey}},
		"actions":     []string{"Admin", "Read", "List", "Tagging", "Write"},
	}}})
	confPath := filepath.Join(dir, "s3.json")
	if err := os.WriteFile(confPath, conf, 0o600); err != nil {
		return nil, err
	}
	data := filepath.Join(dir, "data")
	if err := os.Mkdir(data, 0o755); err != nil {
		return nil, err
	}
	ports, err := freePorts(8)
	if err != nil {
		return nil, err
	}
	p := func(i int) string { return strconv.Itoa(ports[i]) }
	args := []string{"server",
		"-ip=127.0.0.1", "-ip.bind=127.0.0.1", "-dir=" + data,
		"-master.port=" + p(0), "-master.port.grpc=" + p(1),
		"-volume.port=" + p(2), "-volume.port.grpc=" + p(3),
		"-filer", "-filer.port=" + p(4), "-filer.port.grpc=" + p(5),
		"-filer.localSocket=" + filepath.Join(dir, "filer.sock"),
		"-s3", "-s3.port=" + p(6), "-s3.port.grpc=" + p(7), "-s3.config=" + confPath,
		"-s3.localSocket=" + filepath.Join(dir, "s3.sock"),
		"-s3.port.iceberg=0", "-s3.port.lance=0", "-s3.iam=false",
		// No reports to any outside address; small volumes for a small disk footprint.
		"-master.telemetry=false", "-master.volumeSizeLimitMB=64", "-volume.max=0",
		"-volume.preStopSeconds=0",
	}
	logPath := filepath.Join(dir, "weed.log")
	logf, err := os.Create(logPath)
	if err != nil {
		return nil, err
	}
	defer logf.Close()
	cmd := exec.Command(bin, args...)
	cmd.Dir = dir
	cmd.Stdout, cmd.Stderr = logf, logf
	// Should the test process die without stopping it, the kernel ends the server too.
	cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL}
	if err := cmd.Start(); err != nil {
		return nil, err
	}
	exited := make(chan error, 1)
	go func() { exited <- cmd.Wait() }()
	w.stop = func() {
		_ = cmd.Process.Signal(syscall.SIGTERM)
		select {
		case <-exited:
		case <-time.After(3 * time.Second): // its graceful stop takes about 10 s: not needed here
			_ = cmd.Process.Kill()
			<-exited
		}
		// The gRPC sockets it opens in /tmp whatever its options (named by port).
		for _, svc := range []struct {
			name string
			port int
		}{{"master", ports[1]}, {"volume", ports[3]}, {"filer", ports[5]}, {"s3", ports[7]}} {
			os.Remove(fmt.Sprintf("/tmp/seaweedfs-%s-grpc-%d.sock", svc.name, svc.port))
		}
		os.RemoveAll(dir)
	}
	w.endpoint = "http://127.0.0.1:" + p(6)
	ctx, cancel := context.WithTimeout(context.Background(), weedStartTimeout)
	defer cancel()
	probe := &Server{Bucket: "ridgeflank-ready", AccessKeyID: w.accessKeyID, SecretAccessKey: w.secretAccessKey}
	if err := weedReady(ctx, w.endpoint, probe, exited); err != nil {
		tail := logTail(logPath, 3000)
		w.stop()
		if strings.Contains(tail, "address already in use") {
			return nil, fmt.Errorf("%w: %v", errPortTaken, err)
		}
		return nil, fmt.Errorf("%v; its log ends:\n%s", err, tail)
	}
	return w, nil
}

// weedReady creates the bucket and stores, reads and removes one object, retrying while the
// server's parts come up; it gives up when ctx ends or the process exits.
func weedReady(ctx context.Context, endpoint string, s *Server, exited <-chan error) error {
	client := s3.New(s3.Options{
		Region:                     "us-east-1",
		BaseEndpoint:               aws.String(endpoint),
		UsePathStyle:               true,
		Credentials:                credentials.NewStaticCredentialsProvider(s.AccessKeyID, s.SecretAccessKey, ""),
		RequestChecksumCalculation: aws.RequestChecksumCalculationWhenRequired,
		ResponseChecksumValidation: aws.ResponseChecksumValidationWhenRequired,
		RetryMaxAttempts:           1,
	})
	probe := ".ridgeflank-ready"
	var last error
	for {
		last = func() error {
			rctx, cancel := context.WithTimeout(ctx, 10*time.Second)
			defer cancel()
			if _, err := client.HeadBucket(rctx, &s3.HeadBucketInput{Bucket: &s.Bucket}); err != nil {
				if _, err := client.CreateBucket(rctx, &s3.CreateBucketInput{Bucket: &s.Bucket}); err != nil {
					return fmt.Errorf("creating bucket %q: %w", s.Bucket, err)
				}
			}
			if _, err := client.PutObject(rctx, &s3.PutObjectInput{Bucket: &s.Bucket, Key: &probe, Body: bytes.NewReader([]byte("ready"))}); err != nil {
				return fmt.Errorf("storing a probe object: %w", err)
			}
			out, err := client.GetObject(rctx, &s3.GetObjectInput{Bucket: &s.Bucket, Key: &probe})
			if err != nil {
				return fmt.Errorf("reading the probe object: %w", err)
			}
			out.Body.Close()
			if _, err := client.DeleteObject(rctx, &s3.DeleteObjectInput{Bucket: &s.Bucket, Key: &probe}); err != nil {
				return fmt.Errorf("removing the probe object: %w", err)
			}
			return nil
		}()
		if last == nil {
			return nil
		}
		select {
		case err := <-exited:
			return fmt.Errorf("the server exited (%v) before it was ready; last: %v", err, last)
		case <-ctx.Done():
			return fmt.Errorf("not ready after %s: %v", weedStartTimeout, last)
		case <-time.After(250 * time.Millisecond):
		}
	}
}

// freePorts returns n distinct loopback ports that were free a moment ago.
func freePorts(n int) ([]int, error) {
	var ls []net.Listener
	defer func() {
		for _, l := range ls {
			l.Close()
		}
	}()
	ports := make([]int, 0, n)
	for range n {
		l, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			return nil, err
		}
		ls = append(ls, l)
		ports = append(ports, l.Addr().(*net.TCPAddr).Port)
	}
	return ports, nil
}

func logTail(path string, n int) string {
	b, _ := os.ReadFile(path)
	if len(b) > n {
		b = b[len(b)-n:]
	}
	return string(b)
}
