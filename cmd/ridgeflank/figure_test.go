package main

import (
	"bytes"
	"context"
	"image/png"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/store"
)

// The figure command writes the server's figure: a PNG exactly --width-px wide, a PDF; bad
// sizes exit 2 with the fault's message.
func TestFigureCommand(t *testing.T) {
	ctx := context.Background()
	dataDir := filepath.Join(t.TempDir(), "data")
	st, err := store.Open(ctx, store.Config{DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demobasin.Install(ctx, st, smallBasin(t)); err != nil {
		t.Fatal(err)
	}
	st.Close()
	dir := t.TempDir()
	args := []string{"figure", "--data", dataDir, "--dataset", demobasin.DatasetID, "--bbox", "-150,-35,-138,-24", "--parameter", "residual_depth"}
	pngPath := filepath.Join(dir, "r.png")
	if code, _, errOut := runCLI(t, nil, append(args, "--out", pngPath, "--width-px", "700", "--dpi", "100")...); code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	raw, _ := os.ReadFile(pngPath)
	cfg, err := png.DecodeConfig(bytes.NewReader(raw))
	if err != nil || cfg.Width != 700 {
		t.Errorf("PNG %d wide (%v), want 700", cfg.Width, err)
	}
	pdfPath := filepath.Join(dir, "r.pdf")
	if code, _, errOut := runCLI(t, nil, append(args, "--out", pdfPath)...); code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if raw, _ := os.ReadFile(pdfPath); !bytes.HasPrefix(raw, []byte("%PDF")) {
		t.Error("the PDF does not start with %PDF")
	}
	code, _, errOut := runCLI(t, nil, append(args, "--out", pngPath, "--dpi", "5000")...)
	if code != 2 || !strings.Contains(errOut, "dpi") {
		t.Errorf("--dpi 5000: exit %d, %q", code, errOut)
	}
}
