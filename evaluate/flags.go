package evaluate

import (
	"fmt"
	"math"
	"sort"

	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// Plausibility thresholds. A value beyond one of them is not answered as a number (NaN in
// grids, null in JSON) and the answer carries a Flag naming the input that caused it. The
// thresholds are common practice, no source: the deepest known ocean floor is about 11 km, so a
// corrected or observed depth beyond 12 km is no seafloor; sediment columns on oceanic crust
// stay well below 20 km; thicknesses and ages cannot be negative; and ages are answered only
// within the model's tabulated range, 0 to thermal.TableMaxAgeMa.
const (
	MaxDepthM    = 12000.0               // corrected and observed depth, m positive down
	MaxSedimentM = 20000.0               // sediment thickness, m
	MaxAgeMa     = thermal.TableMaxAgeMa // seafloor age, Ma
)

// Flag says that some values of one parameter were refused because an input was physically
// impossible: Count values, because of Input (a parameter or grid role, e.g.
// "sediment_thickness"), for Reason.
type Flag struct {
	Parameter string `json:"parameter"`
	Input     string `json:"input"`
	Count     int    `json:"count"`
	Reason    string `json:"reason"`
}

// The inputs a check can find at fault; a parameter depends on a set of them.
const (
	inAge = 1 << iota
	inObs
	inSed
	inCrust
	inCorr // the corrected depth itself (its cause is reported as observed_depth)
)

// dependsOn is the set of inputs a parameter's value depends on.
func dependsOn(id string) int {
	switch id {
	case PSeafloorAge, PPredictedDepth, PHeatFlow, PThermalThickness, PDepth600C,
		PPredictedDepthUncertainty, PHeatFlowUncertainty, PThermalThicknessUncertainty, PRidgePush:
		return inAge
	case PObservedDepth:
		return inObs
	case PSedimentThickness:
		return inSed
	case PCorrectedDepth:
		return inObs | inSed | inCrust | inCorr
	case PResidualDepth, PResidualDepthUncertainty:
		return inAge | inObs | inSed | inCrust | inCorr
	}
	return 0
}

// sample are the inputs of one position (NaN when absent or no data); obs is positive down.
type sample struct{ age, obs, sed, crust, corr float64 }

type issue struct {
	in     int
	input  string
	reason string
}

// screen appends the impossible inputs of one sample to out.
func screen(s sample, out []issue) []issue {
	switch {
	case s.age < 0:
		out = append(out, issue{inAge, PSeafloorAge, "negative seafloor age"})
	case s.age > MaxAgeMa:
		out = append(out, issue{inAge, PSeafloorAge, ageRangeReason})
	}
	switch {
	case s.sed < 0:
		out = append(out, issue{inSed, PSedimentThickness, "negative sediment thickness"})
	case s.sed > MaxSedimentM:
		out = append(out, issue{inSed, PSedimentThickness, "sediment thickness beyond 20 km"})
	}
	if s.crust < 0 {
		out = append(out, issue{inCrust, RoleCrust, "negative crustal thickness"})
	}
	obsBad := s.obs > MaxDepthM
	if obsBad {
		out = append(out, issue{inObs, PObservedDepth, "observed depth beyond 12 km"})
	}
	if !obsBad && s.corr > MaxDepthM && !(s.sed > MaxSedimentM) {
		out = append(out, issue{inCorr, PObservedDepth, "corrected depth beyond 12 km"})
	}
	return out
}

// flagger counts refused values per parameter, input and reason.
type flagger struct {
	params []Parameter
	deps   []int
	need   int // union of deps
	counts map[Flag]int
	buf    []issue
}

func newFlagger(ps []Parameter) *flagger {
	f := &flagger{params: ps, deps: make([]int, len(ps)), counts: map[Flag]int{}}
	for i, p := range ps {
		f.deps[i] = dependsOn(p.ID)
		f.need |= f.deps[i]
	}
	return f
}

// check screens one sample and reports, through refuse, each parameter index whose value must
// not be answered.
func (f *flagger) check(s sample, refuse func(i int)) {
	f.buf = screen(s, f.buf[:0])
	if len(f.buf) == 0 {
		return
	}
	for i, d := range f.deps {
		for _, is := range f.buf {
			if d&is.in != 0 {
				refuse(i)
				f.counts[Flag{Parameter: f.params[i].ID, Input: is.input, Reason: is.reason}]++
				break
			}
		}
	}
}

// merge adds o's counts to f's (both over the same parameters).
func (f *flagger) merge(o *flagger) {
	for k, n := range o.counts {
		f.counts[k] += n
	}
}

// flags lists the counts in a stable order.
func (f *flagger) flags() []Flag {
	out := make([]Flag, 0, len(f.counts))
	for k, n := range f.counts {
		k.Count = n
		out = append(out, k)
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.Parameter != b.Parameter {
			return a.Parameter < b.Parameter
		}
		if a.Input != b.Input {
			return a.Input < b.Input
		}
		return a.Reason < b.Reason
	})
	return out
}

var nan = math.NaN()

var ageRangeReason = fmt.Sprintf("seafloor age beyond the model's range (0 to %g Ma)", MaxAgeMa)

// corrCanExceedRows reports whether a corrected depth beyond MaxDepthM can occur over the
// cells of obs (observed depth, m positive down) and sed (sediment thickness, m; equal length,
// or nil), so that corrected depth must be computed for the check. Without a crustal-thickness
// grid the corrected depth is at most observed + sediment thickness: the unloading correction
// S·(ρm − ρs)/(ρm − ρw) is less than S because the sediment is denser than water (Airy
// isostasy; Sclater & Christie 1980). With a crustal-thickness grid, whose correction may
// have either sign, it is always computed. A nil obs means the check cannot find a cause; a
// nil sed counts as no sediment.
func corrCanExceedRows(obs, sed []float32, crust bool) bool {
	if crust {
		return true
	}
	if obs == nil {
		return false
	}
	if sed == nil {
		for _, o := range obs {
			if float64(o) > MaxDepthM {
				return true
			}
		}
		return false
	}
	sed = sed[:len(obs)]
	for k, o := range obs {
		v := float64(o)
		if s := float64(sed[k]); s > 0 {
			v += s
		}
		if v > MaxDepthM {
			return true
		}
	}
	return false
}

// screenCorrOnItsOwn is the one rule, for every way a window, tile or row block is evaluated,
// of when corrected depths must be computed for the plausibility screen in a kernel call of
// their own: when the answer needs corrected depths as an input (needCorr), does not ask for
// them itself (want), and the window could hold one beyond MaxDepthM (corrCanExceedRows, over
// the window's own cells). They are not added to the answer's call: asking geo.Evaluate for
// corrected depth together with the residual changes the kernel's path for the residual
// (predicted and corrected depth are fused through tables otherwise, within 1 cm), and an
// answer must not depend on how a question is cut into windows.
func screenCorrOnItsOwn(needCorr bool, want geo.Outputs, obs, sed []float32, crust bool) bool {
	return needCorr && want&geo.OutCorrectedDepth == 0 && corrCanExceedRows(obs, sed, crust)
}
