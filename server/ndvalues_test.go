package server

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"net/http/httptest"
	"strconv"
	"testing"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/numjson"
)

// spliceGrid is a SYNTHETIC nx × ny grid with no-data cells, infinities and values over many
// decades, so the chunk boundaries of streamValues fall on every kind of value.
func spliceGrid(nx, ny int, seed uint64) *geo.Grid {
	g := geo.NewGrid(nx, ny, -45, 10, 1.0/60, 1.0/60, geo.CellCentre)
	r := rand.New(rand.NewPCG(seed, 5))
	for i := range g.Data {
		switch i % 97 {
		case 0:
			g.Data[i] = float32(math.NaN())
		case 1:
			g.Data[i] = float32(math.Inf(1 - 2*(i%2)))
		default:
			g.Data[i] = float32((r.Float64() - 0.3) * math.Pow(10, float64(r.IntN(14)-6)))
		}
	}
	return g
}

// The gridded values writeJSON writes itself give, byte for byte, the document encoding/json
// writes for the same answer with the values as []numjson.Float (the encoding before values
// were streamed), and each value is strconv's correctly rounded 7-digit form (the reference
// rule numjson states) or null.
func TestWriteJSONStreamedValuesMatchEncodingJSON(t *testing.T) {
	pr, _ := evaluate.ParameterByID(evaluate.PResidualDepth)
	pa, _ := evaluate.ParameterByID(evaluate.PSeafloorAge)
	for _, sz := range [][2]int{{3, 2}, {200, 100}, {701, 523}} { // below streamMinValues, 1 chunk, 6 chunks with a short last one
		nx, ny := sz[0], sz[1]
		lat := geo.NewGrid(nx, ny, -45, 10, 1.0/60, 1.0/60, geo.CellCentre)
		grids := []*geo.Grid{spliceGrid(nx, ny, 1), spliceGrid(nx, ny, 2)}
		c := gridCoverage(lat, []evaluate.Parameter{pr, pa}, grids)
		rec := httptest.NewRecorder()
		if err := writeJSON(rec, 200, MediaCovJSON, c); err != nil {
			t.Fatal(err)
		}
		got := rec.Body.Bytes()

		// the reference: the same coverage through encoding/json alone (placeholders not set)
		var ref bytes.Buffer
		enc := json.NewEncoder(&ref)
		enc.SetEscapeHTML(false)
		if err := enc.Encode(c); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, ref.Bytes()) {
			t.Fatalf("%d×%d: the answer differs from encoding/json's (%d and %d bytes)", nx, ny, len(got), ref.Len())
		}
		// byte for byte: the values array as it stands in the answer
		for i, g := range grids {
			want, _ := json.Marshal(numjson.Floats(f64s(g.Data)))
			if !bytes.Contains(got, want) {
				t.Fatalf("%d×%d: grid %d's values are not encoding/json's bytes", nx, ny, i)
			}
			var vals []*float64
			if err := json.Unmarshal(want, &vals); err != nil {
				t.Fatal(err)
			}
			for k, v := range g.Data {
				x := float64(v)
				switch {
				case math.IsNaN(x) || math.IsInf(x, 0):
					if vals[k] != nil {
						t.Fatalf("value %d: %v written as %v, want null", k, x, *vals[k])
					}
				case vals[k] == nil || strconv.FormatFloat(*vals[k], 'g', -1, 64) != strconv.FormatFloat(numjson.Round(x), 'g', -1, 64):
					t.Fatalf("value %d: %v not written as its 7-digit rounding", k, x)
				}
			}
		}
		if bytes.Contains(got, []byte("ridgeflank-values-")) {
			t.Fatalf("%d×%d: a placeholder was left in the answer", nx, ny)
		}
	}
}

func f64s(v []float32) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = float64(x)
	}
	return out
}
