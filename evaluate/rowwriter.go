package evaluate

import (
	"context"
	"errors"

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

// newNetCDFWriter is a streamed CF netCDF file (not yet available: large netCDF answers are
// refused until the streaming netCDF writer lands).
func newNetCDFWriter(path string, header geo.Grid, m gdal.Meta) (rowWriter, error) {
	return nil, errors.New("export: netCDF files larger than max_area_cells cannot be streamed yet; ask for a COG")
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
