package ingest

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPrepareRangeVector: prepareRange (eight values at a time where the processor allows)
// gives the extremes and the values of prepareRangeGeneric, one value at a time, for blocks of
// every length up to 100 and a long one, holding NaNs of several payloads (each made the one
// NaN), infinities, ±0 and ordinary values; an all-NaN block gives +Inf and −Inf.
func TestPrepareRangeVector(t *testing.T) {
	if !haveRangeAVX {
		t.Log("no AVX here: prepareRange is prepareRangeGeneric")
	}
	rng := rand.New(rand.NewPCG(1, 2))
	special := []float32{float32(math.NaN()), math.Float32frombits(0x7f800001), math.Float32frombits(0xffc00123),
		float32(math.Inf(1)), float32(math.Inf(-1)), 0, float32(math.Copysign(0, -1)), math.MaxFloat32, -math.MaxFloat32}
	nanBits := math.Float32bits(float32(math.NaN()))
	for _, n := range append([]int{1000003}, func() []int {
		var s []int
		for i := range 101 {
			s = append(s, i)
		}
		return s
	}()...) {
		for trial := range 3 {
			a := make([]float32, n)
			for i := range a {
				a[i] = float32(rng.NormFloat64() * 3000)
				if rng.IntN(10) == 0 {
					a[i] = special[rng.IntN(len(special))]
				}
				if trial == 2 {
					a[i] = special[0] // every value NaN
				}
			}
			b := append([]float32(nil), a...)
			lo, hi := prepareRange(a, 1)
			wlo, whi := prepareRangeGeneric(b, 1)
			if lo != wlo || hi != whi {
				t.Fatalf("n %d trial %d: extremes %g, %g; one at a time %g, %g", n, trial, lo, hi, wlo, whi)
			}
			for i := range a {
				if math.Float32bits(a[i]) != math.Float32bits(b[i]) && !(a[i] == 0 && b[i] == 0) {
					t.Fatalf("n %d value %d: %#x, one at a time %#x", n, i, math.Float32bits(a[i]), math.Float32bits(b[i]))
				}
				if a[i] != a[i] && math.Float32bits(a[i]) != nanBits {
					t.Fatalf("n %d value %d: NaN %#x is not the one NaN", n, i, math.Float32bits(a[i]))
				}
			}
			if trial == 2 && n > 0 && !(math.IsInf(float64(lo), 1) && math.IsInf(float64(hi), -1)) {
				t.Fatalf("n %d, every value NaN: extremes %g, %g", n, lo, hi)
			}
		}
	}
}

func BenchmarkPrepareRange(b *testing.B) {
	v := make([]float32, 1<<20)
	for i := range v {
		v[i] = float32(i%1000) * 0.5
	}
	for _, c := range []struct {
		name string
		f    func([]float32, float64) (float32, float32)
	}{{"vector", prepareRange}, {"one-at-a-time", prepareRangeGeneric}} {
		b.Run(c.name, func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(int64(4 * len(v)))
			for b.Loop() {
				c.f(v, 1)
			}
		})
	}
}
