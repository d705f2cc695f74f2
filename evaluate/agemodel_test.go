package evaluate

import (
	"context"
	"fmt"
	"math"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// FormatNumber: 7 significant digits, shortest form, empty when not finite (worked by hand).
func TestFormatNumber(t *testing.T) {
	for _, tc := range []struct {
		v    float64
		want string
	}{
		{1e-300, "1e-300"},
		{0.000123456789, "0.0001234568"},
		{3755.16812345, "3755.168"},
		{4.126163e12, "4.126163e+12"},
		{0, "0"},
		{100, "100"},
		{math.Inf(1), ""},
		{math.NaN(), ""},
	} {
		t.Run(fmt.Sprint(tc.v), func(t *testing.T) {
			if got := FormatNumber(tc.v); got != tc.want {
				t.Errorf("FormatNumber(%g) = %q, want %q", tc.v, got, tc.want)
			}
		})
	}
}

// CheckAges: 0 to MaxAgeMa (400 Ma, thermal.TableMaxAgeMa) inclusive, a fault.AgeOutOfRange
// about the named field otherwise.
func TestCheckAges(t *testing.T) {
	for _, tc := range []struct {
		name string
		age  float64
		ok   bool
	}{
		{"ridge", 0, true}, {"limit", 400, true}, {"just over", 400.001, false},
		{"negative", -1e-9, false}, {"NaN", math.NaN(), false}, {"infinite", math.Inf(1), false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := CheckAges("ages", 10, tc.age)
			if tc.ok != (err == nil) {
				t.Fatalf("CheckAges(%g) = %v", tc.age, err)
			}
			if f, ok := fault.As(err); err != nil && (!ok || f.Kind != fault.AgeOutOfRange || f.Field != "ages") {
				t.Errorf("fault %+v", f)
			}
		})
	}
}

// GeothermMaxKm: the plate thickness (PSM 125 km, Parsons & Sclater 1977; GDH1 95 km, Stein &
// Stein 1992), 150 km for half-space cooling.
func TestGeothermMaxKm(t *testing.T) {
	for id, want := range map[string]float64{thermal.IDPSM: 125, thermal.IDGDH1: 95, thermal.IDHalfSpace: 150} {
		m, _ := thermal.Builtin(id)
		if got := GeothermMaxKm(m.Params()); got != want {
			t.Errorf("%s: %g km, want %g", id, got, want)
		}
	}
}

// RidgePush equals thermal.RidgePushNPerM and, for the half-space set at 100 Ma, the closed form
// of Turcotte & Schubert (Geodynamics, 2nd ed. 2002, chapter 6; from memory, equation number
// not checked): g ρm α ΔT κ t [1 + 2 ρm α ΔT/(π (ρm − ρw))] = 4.126e12 N/m with ρm 3300,
// ρw 1000 kg/m³, α 3e-5 /K, ΔT 1300 K, κ 1 mm²/s, g 9.81 m/s² (worked by hand). Tolerance 0.5 %.
func TestRidgePush(t *testing.T) {
	m, _ := thermal.Builtin(thermal.IDHalfSpace)
	ages := []float64{0, 10, 100, 400}
	got, err := RidgePush(context.Background(), m, "ages", ages)
	if err != nil {
		t.Fatal(err)
	}
	for i, a := range ages {
		if want := thermal.RidgePushNPerM(m, a); got[i] != want {
			t.Errorf("%g Ma: %g, thermal %g", a, got[i], want)
		}
	}
	if math.Abs(got[2]-4.126e12) > 0.005*4.126e12 {
		t.Errorf("100 Ma: %g N/m, want 4.126e12 ± 0.5 %%", got[2])
	}
	if _, err := RidgePush(context.Background(), m, "ages", []float64{401}); !fault.Is(err, fault.AgeOutOfRange) {
		t.Errorf("401 Ma: %v", err)
	}
}

// BenchmarkRidgePushPlate is one plate-model ridge push (256 series temperatures): the cost
// that bounds the ridge-push endpoint's 10 001 ages.
func BenchmarkRidgePushPlate(b *testing.B) {
	m, _ := thermal.Builtin(thermal.IDGDH1)
	ages := []float64{55}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := RidgePush(context.Background(), m, "ages", ages); err != nil {
			b.Fatal(err)
		}
	}
}
