package numjson

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
	"time"
)

type inner struct {
	A float64 `json:"a_m"`
	B string  `json:"b,omitempty"`
}

type sample struct {
	inner
	Name   string            `json:"name"`
	Skip   int               `json:"-"`
	Empty  []int             `json:"empty,omitempty"`
	Nil    []float64         `json:"nil"`
	Ptr    *float64          `json:"ptr,omitempty"`
	Vals   []float64         `json:"vals"`
	Map    map[string]int    `json:"map"`
	When   time.Time         `json:"when"`
	Raw    json.RawMessage   `json:"raw"`
	Nested []inner           `json:"nested"`
	Any    any               `json:"any"`
	Labels map[string]string `json:"labels,omitempty"`
	Flag   bool              `json:"flag"`
	U      uint8             `json:"u"`
	hidden int
}

// Without NaN, Marshal must agree with encoding/json byte for byte (the reference encoder).
func TestMarshalMatchesEncodingJSON(t *testing.T) {
	x := 2.5
	s := sample{inner: inner{A: 1.25, B: "<b>"}, Name: "line \"A\"", Skip: 9, Ptr: &x, Vals: []float64{0, -1e-9, 3e21},
		Map: map[string]int{"z": 1, "a": 2}, When: time.Date(2026, 12, 3, 6, 0, 0, 0, time.UTC), Raw: json.RawMessage(`{"k":1}`),
		Nested: []inner{{A: 4}}, Any: map[string]any{"q": []any{1.5, "w"}}, Flag: true, U: 7, hidden: 3}
	got, err := Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	want, err := json.Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	// encoding/json escapes < and > by default; Marshal does not (SetEscapeHTML(false), as the server writes).
	var a, b any
	if err := json.Unmarshal(got, &a); err != nil {
		t.Fatalf("Marshal wrote invalid JSON %s: %v", got, err)
	}
	_ = json.Unmarshal(want, &b)
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	if string(ja) != string(jb) {
		t.Fatalf("Marshal\n%s\nencoding/json\n%s", got, want)
	}
}

// RFC 8259 §6: "Numeric values that cannot be represented ... (such as Infinity and NaN) are not
// permitted", so they become null.
func TestNonFiniteIsNull(t *testing.T) {
	tests := []struct {
		name string
		in   any
		want string
	}{
		{"nan", math.NaN(), "null"},
		{"+inf", math.Inf(1), "null"},
		{"-inf in slice", []float64{1, math.Inf(-1)}, "[1,null]"},
		{"struct field", inner{A: math.NaN()}, `{"a_m":null}`},
		{"seven digits", 1550.744321, "1550.744"}, // Digits = 7
		{"Float type", Float(math.NaN()), "null"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := Marshal(tc.in)
			if err != nil {
				t.Fatal(err)
			}
			if string(got) != tc.want {
				t.Errorf("got %s, want %s", got, tc.want)
			}
		})
	}
}

func TestCSV(t *testing.T) {
	tests := []struct {
		name string
		in   float64
		want string
	}{
		{"nan empty", math.NaN(), ""},
		{"inf empty", math.Inf(1), ""},
		{"rounded", -4123.45678, "-4123.457"},
		{"zero", 0, "0"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := CSV(tc.in); got != tc.want {
				t.Errorf("CSV(%v) = %q, want %q", tc.in, got, tc.want)
			}
		})
	}
}

// appendRounded gives, byte for byte, the reference rule strconv.AppendFloat(Round(v), 'g', -1)
// (strconv is the reference: correctly rounded decimal conversion).
func TestAppendRoundedMatchesStrconv(t *testing.T) {
	ref := func(v float64) string { return strconv.FormatFloat(Round(v), 'g', -1, 64) }
	edge := []float64{0, math.Copysign(0, -1), 1, -1, 0.5, 1e-4, 1e-5, 9.9999995e-5, 123456, 999999.5, 1234567, 9999999.5,
		1e21, 1e-300, 5e-324, math.MaxFloat64, -math.SmallestNonzeroFloat64, 1550.744, 0.1, 100, 1e6, 0.99999995, 12345678}
	r := rand.New(rand.NewPCG(1, 2))
	for range 200_000 {
		edge = append(edge, (r.Float64()-0.5)*math.Pow(10, float64(r.IntN(40)-20)))
	}
	for _, v := range edge {
		if got, want := string(appendRounded(nil, v)), ref(v); got != want {
			t.Fatalf("appendRounded(%v) = %q, reference %q", v, got, want)
		}
	}
}

// AppendJSON writes what Float's MarshalJSON writes (null for NaN and ±Inf per RFC 8259 §6,
// else strconv's correctly rounded 7-digit form, the reference rule), appended to what is there.
func TestAppendJSON(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	vals := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, -1e-7, 1550.744321, 1e21, 123456.75}
	for range 10_000 {
		vals = append(vals, float64(float32((r.Float64()-0.5)*math.Pow(10, float64(r.IntN(16)-8)))))
	}
	for _, v := range vals {
		want := "null"
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			want = strconv.FormatFloat(Round(v), 'g', -1, 64)
		}
		if got := string(AppendJSON([]byte("x,"), v)); got != "x,"+want {
			t.Fatalf("AppendJSON(%v) = %q, want %q", v, got, "x,"+want)
		}
	}
}

// BenchmarkAppendJSON writes 1 M SYNTHETIC grid values (float32 depths in metres, one in ten no
// data) into one buffer, as a gridded CoverageJSON answer does.
func BenchmarkAppendJSON(b *testing.B) {
	vals := make([]float32, 1<<20)
	for i := range vals {
		if i%10 == 3 {
			vals[i] = float32(math.NaN())
			continue
		}
		vals[i] = float32(300*math.Sin(float64(i)*1e-3) + 0.01*float64(i%977))
	}
	buf := make([]byte, 0, 10*len(vals))
	b.ReportAllocs()
	for b.Loop() {
		buf = buf[:0]
		for _, v := range vals {
			buf = AppendJSON(buf, float64(v))
			buf = append(buf, ',')
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(vals)), "ns/value")
}
