package evaluate

import (
	"context"
	"fmt"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// rowWriter is a file written row block by row block: gdal.COGStream or gdal.NetCDFStream.
type rowWriter interface {
	BlockRows() int
	WriteRows(row0 int, rows []float32) error
	Finish(ctx context.Context, path string, m gdal.Meta, progress func(float64)) error
	Close() error
}

// cogWriter is a streamed COG staged in dir (beside the file it becomes).
type cogWriter struct{ *gdal.COGStream }

func newCOGWriter(header geo.Grid, dir string) (rowWriter, error) {
	st, err := gdal.NewCOGStream(header, gdal.StreamOptions{StageDir: dir})
	if err != nil {
		return nil, err
	}
	return cogWriter{st}, nil
}

// netCDFWriter is a streamed CF netCDF-4 file (gdal.NetCDFStream: WriteNetCDF's variables,
// attributes and fill value), written under a temporary name beside the path it was started
// for and renamed into place by Finish.
type netCDFWriter struct {
	*gdal.NetCDFStream
	path string
	rows int
}

// netCDFBlockBytes bounds one block of rows handed to a netCDFWriter (24 MiB of float32: 256
// rows of a 2-arc-minute global grid, 72 of a 15-arc-second one; at least 16 rows).
const netCDFBlockBytes = 24 << 20

// newNetCDFWriter starts the netCDF file path for the lattice of header with the metadata m
// (the file's metadata is fixed when it is created: Finish's m is not used). Any size is
// written; what is refused (over Limits.MaxExportCells) is refused before, as for a COG.
func newNetCDFWriter(path string, header geo.Grid, m gdal.Meta) (rowWriter, error) {
	st, err := gdal.NewNetCDFStream(path, header, m)
	if err != nil {
		return nil, fmt.Errorf("export: starting the netCDF file: %w", err)
	}
	return &netCDFWriter{NetCDFStream: st, path: path, rows: gdal.NetCDFBlockRows(header.NX, netCDFBlockBytes)}, nil
}

// BlockRows is the number of rows written at a time.
func (w *netCDFWriter) BlockRows() int { return w.rows }

// Finish completes the file at the path it was started for (path must be that one).
func (w *netCDFWriter) Finish(ctx context.Context, path string, _ gdal.Meta, progress func(float64)) error {
	if path != w.path {
		return fmt.Errorf("export: netCDF file started as %s, finished as %s", w.path, path)
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := w.NetCDFStream.Finish(nil); err != nil {
		return err
	}
	if progress != nil {
		progress(1)
	}
	return nil
}

// rowBuffer gathers rows of any count into the writer's blocks.
type rowBuffer struct {
	w    rowWriter
	nx   int
	buf  []float32
	rows int // rows written so far
}

func newRowBuffer(w rowWriter, nx int) *rowBuffer {
	return &rowBuffer{w: w, nx: nx, buf: make([]float32, 0, w.BlockRows()*nx)}
}

// add appends whole rows and writes every full block.
func (b *rowBuffer) add(rows []float32) error {
	block := b.w.BlockRows() * b.nx
	for len(rows) > 0 {
		n := min(block-len(b.buf), len(rows))
		b.buf = append(b.buf, rows[:n]...)
		rows = rows[n:]
		if len(b.buf) == block {
			if err := b.w.WriteRows(b.rows, b.buf); err != nil {
				return err
			}
			b.rows += b.w.BlockRows()
			b.buf = b.buf[:0]
		}
	}
	return nil
}

// flush writes the last, shorter block.
func (b *rowBuffer) flush() error {
	if len(b.buf) == 0 {
		return nil
	}
	if err := b.w.WriteRows(b.rows, b.buf); err != nil {
		return err
	}
	b.rows += len(b.buf) / b.nx
	b.buf = b.buf[:0]
	return nil
}
