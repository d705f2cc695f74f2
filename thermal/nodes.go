package thermal

import (
	"math"
	"sync"
	"sync/atomic"
	"unsafe"
)

// Float32Nodes is a lookup table of a smooth function f(x) of a non-negative
// float32 x, indexed by the bits of x itself: no square root, no division
// and no float-to-integer conversion per value, which lets a batch pass over
// a grid run close to the speed of plain streaming.
//
// Node j is the interval that starts at the float32 whose bits are
// j<<Float32NodeShift, so for a value x with bits b = math.Float32bits(x)
// the node is j = b>>Float32NodeShift and the low Float32NodeShift bits of b
// place x inside the interval. Within one interval the float32 exponent is
// fixed (an interval ends at most at the next power of two), so x is linear
// in those low bits and Float32Node.At(b) = v + low·d interpolates f
// linearly in x. There are 2^(23−Float32NodeShift) = 256 nodes per octave
// [2^e, 2^(e+1)), a spacing h = 2^e/256 (between x/512 and x/256) that grows
// in proportion to x. Below 2^−126 ≈ 1.2e-38 the float32 subnormals are
// spaced uniformly, so the 256 nodes of [0, 2^−126) are uniform (2^−134
// apart) and reach down to x = 0 (node 0); the relative bounds below hold
// for x ≥ 2^−126 only, far below any age or thickness that means something. Linear interpolation over a step h misses a curve of second
// derivative f″ by at most h²·|f″|/8, so a power law f = C·x^p misses by at
// most |p(p−1)|/524288 of f: about 5e-7 of the value for √x and 1.4e-6 for
// 1/√x (the heat flow's singularity at age 0), on top of float32 rounding
// (6e-8 of the value). A table ending at 2^E holds (127+E)·256 nodes of
// 8 bytes (about 280 KiB for E = 9 or 15), of which a grid's values touch a
// few octaves.
//
// One unsigned comparison j < uint(len(n)) rejects everything outside the
// table at once: NaN, negative values and −0 (sign bit set, so a huge j),
// +Inf, and values at or beyond the table's end. Callers give those their
// exact fallback (see Table.DepthsM). The intended hot loop is
//
//	b := math.Float32bits(x)
//	if j := uint(b >> thermal.Float32NodeShift); j < uint(len(n)) {
//		y = n[j].At(b)
//	} else {
//		y = fallback(x)
//	}
//
// Float32Nodes is read-only after construction and safe for concurrent use.
type Float32Nodes []Float32Node

// Float32Node is one interval of a Float32Nodes table: the value at its
// start and the change per unit of the low Float32NodeShift bits.
type Float32Node struct{ v, d float32 }

// Node counts of the package's tables, for callers that hold a table as a
// fixed-size array pointer (Go's slice-to-array-pointer conversion,
// (*[AgeNodeCount]Float32Node)(t.DepthNodes())), whose bounds test compiles
// to a comparison with a constant and frees a register in a hot loop.
const (
	// AgeNodeCount is the length of the age tables of Table, which end at
	// TableMaxAgeMa = 400 = 1.5625·2^8: 135 octaves below 2^8 and 144 nodes of
	// [256, 400).
	AgeNodeCount = (127+8)<<(23-Float32NodeShift) + 144
	// SedimentNodeCount is the length of the SedimentCorrector's table, which
	// ends at SedimentNodesMaxM = 2^15 m.
	SedimentNodeCount = (127 + 15) << (23 - Float32NodeShift)
)

// Float32NodeShift is the number of low mantissa bits that place a value
// inside its node: bits>>Float32NodeShift is the node index.
const Float32NodeShift = 15

const (
	nodeFracMask = 1<<Float32NodeShift - 1
	signBit32    = 1 << 31
	infBits32    = 0x7f800000 // math.Float32bits(+Inf)
)

// At interpolates inside the node's interval at the float32 whose bits are
// bits; the node must be number bits>>Float32NodeShift of its table. It is
// small enough to inline into callers' loops.
func (e Float32Node) At(bits uint32) float32 { return e.v + float32(bits&nodeFracMask)*e.d }

// Len is the number of nodes; values with bits>>Float32NodeShift ≥ Len are
// outside the table.
func (n Float32Nodes) Len() int { return len(n) }

// EndBits is the bit pattern of the table's end, the first float32 outside
// it (math.Float32bits of the end value).
func (n Float32Nodes) EndBits() uint32 { return uint32(len(n)) << Float32NodeShift }

// newFloat32Nodes tabulates f on [0, end) where end is a float32 value whose
// low Float32NodeShift bits are zero (a power of two, or 400 = 1.5625·2^8).
// f is evaluated at every node start and at end; an infinite value (heat
// flow at age 0) gets slope 0, so At returns that infinity for the node.
func newFloat32Nodes(end float32, f func(x float64) float64) Float32Nodes {
	eb := math.Float32bits(end)
	if eb&nodeFracMask != 0 || !(end > 0) {
		panic("thermal: node table end not on a node boundary")
	}
	n := make(Float32Nodes, eb>>Float32NodeShift)
	v0 := f(0)
	for j := range n {
		v1 := f(float64(math.Float32frombits(uint32(j+1) << Float32NodeShift)))
		d := (v1 - v0) / (1 << Float32NodeShift)
		if math.IsInf(v0, 0) {
			d = 0
		}
		n[j] = Float32Node{float32(v0), float32(d)}
		v0 = v1
	}
	return n
}

// float32Bits views a []float32 as the []uint32 of its bit patterns
// (math.Float32bits of each element) without copying, so a loop loads the
// bits straight into integer registers.
func float32Bits(s []float32) []uint32 {
	return unsafe.Slice((*uint32)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

// batch writes the table's value of every x in xs to out (as long as xs)
// and reports whether some x outside the table was not NaN; out is NaN for
// every x outside the table.
func (n Float32Nodes) batch(xs, out []float32) (outside bool) {
	xb := float32Bits(xs)
	out = out[:len(xb)]
	nan := float32(math.NaN())
	for i, b := range xb {
		if j := uint(b >> Float32NodeShift); j < uint(len(n)) {
			out[i] = n[j].At(b)
		} else {
			out[i] = nan
			if b&^signBit32 <= infBits32 {
				outside = true
			}
		}
	}
	return outside
}

// batchWithFallback is batch followed by slow(x) for every cell outside the
// table that was not NaN (a rare second pass, only when there are any).
func (n Float32Nodes) batchWithFallback(xs, out []float32, slow func(float64) float64) {
	if len(out) < len(xs) {
		panic("thermal: batch output slice shorter than the input")
	}
	out = out[:len(xs)]
	if n.batch(xs, out) {
		for i, x := range xs {
			if x == x && out[i] != out[i] {
				out[i] = float32(slow(float64(x)))
			}
		}
	}
}

// lazyNodes is a node table built on first use: load is the lock-free fast
// path, build the first call's (racing builders agree; one result is kept).
type lazyNodes struct {
	mu sync.Mutex
	p  atomic.Pointer[Float32Nodes]
}

func (l *lazyNodes) load() *Float32Nodes { return l.p.Load() }

func (l *lazyNodes) build(end float32, f func(float64) float64) *Float32Nodes {
	l.mu.Lock()
	defer l.mu.Unlock()
	if p := l.p.Load(); p != nil {
		return p
	}
	n := newFloat32Nodes(end, f)
	l.p.Store(&n)
	return &n
}
