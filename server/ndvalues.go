package server

import (
	"bytes"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"io"
	"runtime"
	"sort"
	"sync"

	"ridgeflank/numjson"
)

// ndValues are the values of a CoverageJSON NdArray: either a column of float64 (point, multi-
// point and trajectory answers) or a grid's float32 cells (gridded answers). Both encode as a
// JSON array by numjson's rule (seven significant digits, null for no value), the same bytes
// as a []numjson.Float.
type ndValues struct {
	points []float64
	grid   *gridValues
}

// gridValues are one gridded range's cells (row-major, NaN = no value). writeJSON writes them
// itself (streamValues) instead of through encoding/json: while it encodes the rest of the
// answer, token is set and MarshalJSON writes only that placeholder, which writeJSON then
// replaces by the values. Outside writeJSON (token empty) MarshalJSON writes the whole array.
type gridValues struct {
	data  []float32
	token []byte
}

// MarshalJSON implements json.Marshaler.
func (v ndValues) MarshalJSON() ([]byte, error) {
	if v.grid != nil {
		if v.grid.token != nil {
			return v.grid.token, nil
		}
		b := make([]byte, 0, 2+10*len(v.grid.data))
		return appendValues32(append(b, '['), v.grid.data, true), nil
	}
	b := make([]byte, 0, 2+10*len(v.points))
	b = append(b, '[')
	for i, x := range v.points {
		if i > 0 {
			b = append(b, ',')
		}
		b = numjson.AppendJSON(b, x)
	}
	return append(b, ']'), nil
}

// appendValues32 appends the values of v, comma-separated, each as numjson.Float writes it;
// close adds the closing bracket. The first value gets no leading comma.
func appendValues32(b []byte, v []float32, close bool) []byte {
	for i, x := range v {
		if i > 0 {
			b = append(b, ',')
		}
		b = numjson.AppendJSON(b, float64(x))
	}
	if close {
		b = append(b, ']')
	}
	return b
}

// streamedValues is implemented by answers holding gridded values (coverages and the answers
// that carry one).
type streamedValues interface {
	valueGrids() []*gridValues
}

// streamMinValues is the number of gridded values from which writeJSON writes them itself:
// below it encoding/json's way costs little.
const streamMinValues = 1 << 14

// tokenNonce makes the placeholders of gridded values unguessable, so no string of an answer
// (a dataset's description, say) can be mistaken for one.
var tokenNonce = func() string {
	var b [8]byte
	_, _ = rand.Read(b[:])
	return hex.EncodeToString(b[:])
}()

// armValues sets the placeholders of grids (nil when they are too few values to be worth it)
// and returns a function clearing them.
func armValues(grids []*gridValues) func() {
	n := 0
	for _, g := range grids {
		n += len(g.data)
	}
	if n < streamMinValues {
		return func() {}
	}
	for i, g := range grids {
		// a JSON string (escaped NUL first), so encoding/json accepts it as a value
		g.token = fmt.Appendf(nil, `"\u0000ridgeflank-values-%s-%d"`, tokenNonce, i)
	}
	return func() {
		for _, g := range grids {
			g.token = nil
		}
	}
}

// writeSpliced writes doc, the encoded answer, to w with each armed grid's placeholder replaced
// by its values.
func writeSpliced(w io.Writer, doc []byte, grids []*gridValues) error {
	type at struct {
		pos int
		g   *gridValues
	}
	var places []at
	for _, g := range grids {
		if g.token == nil {
			continue
		}
		if i := bytes.Index(doc, g.token); i >= 0 {
			places = append(places, at{i, g})
		}
	}
	sort.Slice(places, func(i, j int) bool { return places[i].pos < places[j].pos })
	prev := 0
	for _, p := range places {
		if _, err := w.Write(doc[prev:p.pos]); err != nil {
			return err
		}
		if err := streamValues(w, p.g.data); err != nil {
			return err
		}
		prev = p.pos + len(p.g.token)
	}
	_, err := w.Write(doc[prev:])
	return err
}

// valueChunk is the number of values encoded into one buffer by streamValues.
const valueChunk = 1 << 16

var chunkBuffers = sync.Pool{New: func() any { b := make([]byte, 0, 12*valueChunk); return &b }}

// streamValues writes data as a JSON array (appendValues32's bytes) to w in chunks of
// valueChunk values, encoding up to GOMAXPROCS (at most 4) chunks at once and writing them in
// order, so the answer's bytes are those of one sequential pass.
func streamValues(w io.Writer, data []float32) error {
	if _, err := w.Write([]byte{'['}); err != nil {
		return err
	}
	nChunks := (len(data) + valueChunk - 1) / valueChunk
	workers := max(1, min(runtime.GOMAXPROCS(0), 4, nChunks))
	bufs := make([]*[]byte, workers)
	for i := range bufs {
		bufs[i] = chunkBuffers.Get().(*[]byte)
	}
	defer func() {
		for _, b := range bufs {
			*b = (*b)[:0]
			chunkBuffers.Put(b)
		}
	}()
	encode := func(k int, b *[]byte) {
		lo, hi := k*valueChunk, min(len(data), (k+1)*valueChunk)
		out := (*b)[:0]
		if k > 0 {
			out = append(out, ',')
		}
		*b = appendValues32(out, data[lo:hi], false)
	}
	for k0 := 0; k0 < nChunks; k0 += workers {
		n := min(workers, nChunks-k0)
		if n == 1 {
			encode(k0, bufs[0])
		} else {
			var wg sync.WaitGroup
			for j := range n {
				wg.Add(1)
				go func() {
					defer wg.Done()
					encode(k0+j, bufs[j])
				}()
			}
			wg.Wait()
		}
		for j := range n {
			if _, err := w.Write(*bufs[j]); err != nil {
				return err
			}
		}
	}
	_, err := w.Write([]byte{']'})
	return err
}
