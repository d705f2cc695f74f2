package report

import (
	"bytes"
	"compress/zlib"
	"errors"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"golang.org/x/text/encoding/charmap"

	"ridgeflank/fault"
	"ridgeflank/survey"
)

func render(t testing.TB, c *survey.Check, o Options) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := Plan(&buf, c, o); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// pdfPageObjects counts page objects ("/Type /Page", not "/Type /Pages"): ISO 32000-1:2008,
// 7.7.3.3, page objects.
var pdfPageObject = regexp.MustCompile(`/Type /Page[^s]`)

// pdfStreams inflates every FlateDecode stream of a PDF (ISO 32000-1, 7.3.8 and 7.4.4).
func pdfStreams(t *testing.T, raw []byte) [][]byte {
	t.Helper()
	var out [][]byte
	for {
		i := bytes.Index(raw, []byte("stream\n"))
		if i < 0 {
			return out
		}
		raw = raw[i+len("stream\n"):]
		j := bytes.Index(raw, []byte("endstream"))
		if j < 0 {
			t.Fatal("PDF: stream without endstream")
		}
		zr, err := zlib.NewReader(bytes.NewReader(raw[:j]))
		if err == nil {
			if b, err := io.ReadAll(zr); err == nil {
				out = append(out, b)
			}
		}
		raw = raw[j+len("endstream"):]
	}
}

// showText matches a literal string shown with Tj (ISO 32000-1, 7.3.4.2 and 9.4.3).
var showText = regexp.MustCompile(`\(((?:[^()\\]|\\.)*)\)\s*Tj`)

// pageTexts are the texts of the content streams that show any text, each joined with spaces,
// decoded from Windows-1252.
func pageTexts(t *testing.T, raw []byte) []string {
	t.Helper()
	var pages []string
	dec := charmap.Windows1252.NewDecoder()
	unescape := strings.NewReplacer(`\(`, "(", `\)`, ")", `\\`, `\`)
	for _, s := range pdfStreams(t, raw) {
		var parts []string
		for _, m := range showText.FindAllSubmatch(s, -1) {
			txt, err := dec.String(unescape.Replace(string(m[1])))
			if err != nil {
				t.Fatal(err)
			}
			parts = append(parts, txt)
		}
		if len(parts) > 0 {
			pages = append(pages, strings.Join(parts, " "))
		}
	}
	return pages
}

func TestPDFPages(t *testing.T) {
	// Pages: 1 summary + one per two lines + the tables, worked out by hand from the layout. The
	// A4 body is 841.89 − 36 − 15 − 14 − 8 − (3 caution lines × 11.5 + 10 + 10) − 52 = 662 pt. The
	// tables: 4 headings of 17 pt, 4 column headers of 26 pt, 3 gaps of 14 pt = 214 pt, and rows of
	// 11.5 pt: per line 3 legs, a total and a note; transits (lines − 1) + 3 totals; 2 per hazard;
	// 1 gap; a "none" row for an empty table. 0 lines: 1 + 3 + 1 + 1 rows, one page; 3 lines: 15 + 5 + 8 + 1 = 29 rows = 333.5 pt, 548 pt in all, one page; 5 lines: 25 + 7 +
	// 8 + 1 = 41 rows = 471.5 pt, 686 pt in all, two pages.
	tests := []struct {
		name  string
		lines int
		want  int
	}{
		{"no lines", 0, 2},
		{"one line", 1, 3},
		{"three lines", 3, 4},
		{"five lines", 5, 6},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := syntheticCheck(tc.lines, 120)
			raw := render(t, c, testOptions())
			if !bytes.HasPrefix(raw, []byte("%PDF-")) {
				t.Fatalf("PDF starts %q", raw[:min(8, len(raw))])
			}
			if got := len(pdfPageObject.FindAll(raw, -1)); got != tc.want {
				t.Errorf("page objects = %d, want %d", got, tc.want)
			}
			if n, err := Pages(c, testOptions()); err != nil || n != tc.want {
				t.Errorf("Pages = %d, %v; want %d", n, err, tc.want)
			}
		})
	}
}

func TestPDFTablesRunOntoMorePages(t *testing.T) {
	// 60 lines of 3 legs: 60 × 5 rows of legs alone is 300 rows, several pages of tables; the
	// column header is repeated on each (common practice, no source).
	c := syntheticCheck(60, 20)
	raw := render(t, c, testOptions())
	pages := pageTexts(t, raw)
	n := len(pdfPageObject.FindAll(raw, -1))
	if n < 1+30+3 {
		t.Fatalf("%d pages for 60 lines; want the summary, 30 profile pages and at least 3 of tables", n)
	}
	cont := 0
	for _, p := range pages {
		if strings.Contains(p, "Legs and lines (continued)") {
			cont++
		}
	}
	if cont < 2 {
		t.Errorf("legs table continued on %d pages, want at least 2", cont)
	}
}

func TestPDFCautionOnEveryPage(t *testing.T) {
	c := syntheticCheck(3, 120)
	raw := render(t, c, testOptions())
	pages := pageTexts(t, raw)
	n := len(pdfPageObject.FindAll(raw, -1))
	if len(pages) != n {
		t.Fatalf("%d content streams with text, %d pages", len(pages), n)
	}
	for i, p := range pages {
		if !strings.Contains(p, "NOT FOR NAVIGATION") {
			t.Errorf("page %d: no NOT FOR NAVIGATION heading", i+1)
		}
		if !strings.Contains(p, c.Caution[:60]) || !strings.Contains(p, "local hydrographic authority") {
			t.Errorf("page %d: the caution is missing or broken: %.300q", i+1, p)
		}
		if want := "Page " + string(rune('1'+i)) + " of 4"; !strings.Contains(p, want) {
			t.Errorf("page %d: no %q", i+1, want)
		}
	}
	// Text outside ASCII reaches the PDF in its code page: "°" as one byte, not "Â°".
	all := strings.Join(pages, " ")
	for _, want := range []string{"Swath opening angle, total (°)", "Area covered (km²)", "Legs and lines", "Hazards", "H4"} {
		if !strings.Contains(all, want) {
			t.Errorf("PDF text lacks %q", want)
		}
	}
	if strings.Contains(all, "Â") {
		t.Error("PDF text holds UTF-8 bytes read as Windows-1252 (Â)")
	}
}

func TestDeterministic(t *testing.T) {
	c := syntheticCheck(3, 200)
	for _, format := range []string{"pdf", "png"} {
		t.Run(format, func(t *testing.T) {
			o := testOptions()
			o.Format, o.Page, o.DPI = format, 2, 60
			a, b := render(t, c, o), render(t, c, o)
			if !bytes.Equal(a, b) {
				t.Fatal("two renderings of the same check differ")
			}
			o.Provenance.Generated = o.Provenance.Generated.Add(time.Hour)
			if bytes.Equal(a, render(t, c, o)) {
				t.Fatal("the generated time does not reach the output")
			}
		})
	}
}

func TestPNGPages(t *testing.T) {
	// Pixel sizes: A4 is 210 × 297 mm (ISO 216), Letter 8.5 × 11 in; px = size in inches × dpi,
	// rounded: 210/25.4 × 150 = 1240.16, 297/25.4 × 150 = 1753.94; 210/25.4 × 72 = 595.28,
	// 297/25.4 × 72 = 841.89; 8.5 × 100 = 850, 11 × 100 = 1100.
	tests := []struct {
		name     string
		size     string
		dpi      int
		page     int
		wantW    int
		wantH    int
		wantBlue bool // a profile page draws the observed depth in Okabe–Ito blue
	}{
		{"a4 150 dpi summary", "a4", 150, 1, 1240, 1754, true},
		{"a4 72 dpi profile", "", 72, 2, 595, 842, true},
		{"letter 100 dpi tables", "letter", 100, 4, 850, 1100, false},
	}
	c := syntheticCheck(3, 200)
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			o := testOptions()
			o.Format, o.PageSize, o.DPI, o.Page = "png", tc.size, tc.dpi, tc.page
			img, err := png.Decode(bytes.NewReader(render(t, c, o)))
			if err != nil {
				t.Fatal(err)
			}
			if b := img.Bounds(); b.Dx() != tc.wantW || b.Dy() != tc.wantH {
				t.Fatalf("size %dx%d, want %dx%d", b.Dx(), b.Dy(), tc.wantW, tc.wantH)
			}
			if n := count(img, cautionFill); n < tc.wantW*3 {
				t.Errorf("caution box fill: %d pixels, want a band of at least %d", n, tc.wantW*3)
			}
			if got := count(img, okBlue) > 20; got != tc.wantBlue {
				t.Errorf("observed-depth blue present = %v, want %v", got, tc.wantBlue)
			}
		})
	}
}

func count(img image.Image, want color.NRGBA) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if color.NRGBAModel.Convert(img.At(x, y)).(color.NRGBA) == want {
				n++
			}
		}
	}
	return n
}

func TestBadOptions(t *testing.T) {
	good := syntheticCheck(1, 20)
	noCaution := syntheticCheck(1, 20)
	noCaution.Caution = " "
	tests := []struct {
		name  string
		c     *survey.Check
		edit  func(*Options)
		kind  fault.Kind
		field string
	}{
		{"nil check", nil, func(*Options) {}, fault.InvalidParameter, "check"},
		{"no caution", noCaution, func(*Options) {}, fault.InvalidParameter, "caution"},
		{"svg", good, func(o *Options) { o.Format = "svg" }, fault.UnsupportedFormat, "format"},
		{"dpi low", good, func(o *Options) { o.Format, o.DPI = "png", 10 }, fault.InvalidParameter, "dpi"},
		{"dpi high", good, func(o *Options) { o.Format, o.DPI = "png", 601 }, fault.InvalidParameter, "dpi"},
		{"page 0 of -1", good, func(o *Options) { o.Format, o.Page = "png", -1 }, fault.InvalidParameter, "page"},
		{"page past the end", good, func(o *Options) { o.Format, o.Page = "png", 4 }, fault.InvalidParameter, "page"},
		{"a3", good, func(o *Options) { o.PageSize = "a3" }, fault.InvalidParameter, "page_size"},
		{"no time", good, func(o *Options) { o.Provenance.Generated = time.Time{} }, fault.InvalidParameter, "generated"},
		{"long title", good, func(o *Options) { o.Title = strings.Repeat("x", MaxTitleLen+1) }, fault.InvalidParameter, "title"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			o := testOptions()
			tc.edit(&o)
			err := Plan(io.Discard, tc.c, o)
			f, ok := fault.As(err)
			if !ok || f.Kind != tc.kind || f.Field != tc.field {
				t.Fatalf("err = %v, want a %s fault on %q", err, tc.kind, tc.field)
			}
		})
	}
}

func TestTooManyPages(t *testing.T) {
	c := syntheticCheck(2*MaxPages, 2)
	_, err := Pages(c, testOptions())
	var f *fault.Error
	if !errors.As(err, &f) || f.Kind != fault.LimitExceeded || f.Limit == nil || f.Limit.Name != "max_report_pages" {
		t.Fatalf("err = %v, want limit max_report_pages", err)
	}
}

func TestThinKeepsExtremes(t *testing.T) {
	// 100,000 samples (a 10,000 km line at 100 m); the shallowest and deepest samples and the
	// edges of a stretch of no data must survive thinning.
	const n = 100_000
	s := survey.Samples{DistanceKm: make([]float64, n), ExpectedDepthM: make([]float64, n), UncertaintyM: make([]float64, n), DepthSource: make([]string, n)}
	for i := range n {
		s.DistanceKm[i] = float64(i) / 10
		s.ExpectedDepthM[i] = 4000 + 10*math.Sin(float64(i)/500)
		s.UncertaintyM[i] = 50
		s.DepthSource[i] = survey.SourceObserved
	}
	s.ExpectedDepthM[31_337] = 900     // a seamount summit
	s.ExpectedDepthM[77_777] = 7200    // a deep
	s.UncertaintyM[5_005] = 1_000      // one uncertain sample
	for i := 50_000; i < 50_500; i++ { // no data
		s.ExpectedDepthM[i] = math.NaN()
		s.DepthSource[i] = survey.SourceNone
	}
	idx := thin(&s)
	if len(idx) > 3*maxDrawn {
		t.Errorf("kept %d of %d samples, want at most %d", len(idx), n, 3*maxDrawn)
	}
	for _, want := range []int{0, 31_337, 77_777, 5_005, 49_999, 50_000, 50_499, 50_500, n - 1} {
		if _, found := slices.BinarySearch(idx, want); !found {
			t.Errorf("sample %d dropped", want)
		}
	}
}

func TestFormats(t *testing.T) {
	tests := []struct {
		name, got, want string
	}{
		// 0.5° = 30' (definition of the minute of arc).
		{"ddm south", ddm(-12.5, "N", "S"), "12°30.000'S"},
		// 0.999999° = 59.99994' rounds to 60.000' and carries into the degrees.
		{"ddm carry", ddm(44.999999, "N", "S"), "45°00.000'N"},
		{"position across 180", position(-30, 190), "30°00.000'S 170°00.000'W"},
		// 28.5 h = 1 day + 4 h 30 min.
		{"hours", hoursDHM(28.5), "1 d 04 h 30 min"},
		{"hours NaN", hoursDHM(math.NaN()), dash},
		{"num NaN", num(math.NaN(), 2), dash},
		{"num no minus zero", num(-0.0004, 2), "0.00"},
		{"leg names", legLabel(survey.Leg{From: 0, To: 1, ToName: "B"}), "WP1 – B"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if tc.got != tc.want {
				t.Errorf("got %q, want %q", tc.got, tc.want)
			}
		})
	}
}

func BenchmarkPlanPDF(b *testing.B) {
	c := syntheticCheck(6, 5000)
	o := testOptions()
	b.ReportAllocs()
	for b.Loop() {
		if err := Plan(io.Discard, c, o); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkPlanPNGPage(b *testing.B) {
	c := syntheticCheck(6, 5000)
	o := testOptions()
	o.Format, o.Page = "png", 2
	b.ReportAllocs()
	for b.Loop() {
		if err := Plan(io.Discard, c, o); err != nil {
			b.Fatal(err)
		}
	}
}

func TestRaggedCheckDoesNotPanic(t *testing.T) {
	// Columns of unequal length, indices out of range, infinities: drawn where possible, never a
	// panic (a check built by another version of the service must still print).
	c := syntheticCheck(2, 50)
	s := &c.Lines[0].Samples
	s.Lon, s.UncertaintyM, s.DepthSource = s.Lon[:10], nil, s.DepthSource[:5]
	s.ExpectedDepthM[20] = math.Inf(1)
	c.Lines[1].Samples = survey.Samples{}
	c.Hazards = append(c.Hazards, survey.Hazard{Kind: "unknown_kind", Line: 9, FromSample: -4, ToSample: 1e6,
		DistanceKm: math.Inf(-1), DepthM: math.NaN(), Lon: math.NaN(), Lat: 91})
	c.Transits = append(c.Transits, survey.Transit{FromLine: 7, ToLine: -1})
	c.Lines[0].Legs = append(c.Lines[0].Legs, survey.Leg{From: 99, To: 100})
	for _, format := range []string{"pdf", "png"} {
		o := testOptions()
		o.Format = format
		n, err := Pages(c, o)
		if err != nil {
			t.Fatal(err)
		}
		for p := 1; p <= n && (format == "png" || p == 1); p++ {
			o.Page = p
			o.DPI = MinDPI
			if len(render(t, c, o)) == 0 {
				t.Errorf("%s page %d: empty", format, p)
			}
		}
	}
}

func TestStepTicks(t *testing.T) {
	// Worked by hand: span 1.5 with at most 5 steps; steps 0.1 (15 steps) and 0.2 (7.5) are too
	// fine, 0.5 (3) gives 29.5, 30.0, 30.5, 31.0 with unlabelled ticks half-way between.
	// Span 4500 m with at most 9 steps: 200 (22.5) is too fine, 500 (9) fits: 10 labels.
	tests := []struct {
		name   string
		max    int
		lo, hi float64
		want   []string
	}{
		{"latitudes", 5, 29.5, 31, []string{"29.5", "30.0", "30.5", "31.0"}},
		{"depths", 9, 0, 4500, []string{"0", "500", "1000", "1500", "2000", "2500", "3000", "3500", "4000", "4500"}},
		{"no span", 5, 3, 3, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var got []string
			for _, tk := range (stepTicks{max: tc.max}).Ticks(tc.lo, tc.hi) {
				if tk.Label != "" {
					got = append(got, tk.Label)
				}
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("labels %q, want %q", got, tc.want)
			}
		})
	}
}

func TestConcurrentRenderingsAgree(t *testing.T) {
	// The PDF library's package defaults are set under a lock; renderings in parallel must give
	// the same bytes as one alone (run with -race to check the lock too).
	c := syntheticCheck(2, 100)
	want := render(t, c, testOptions())
	got := make([][]byte, 4)
	done := make(chan int)
	for i := range got {
		go func() {
			var buf bytes.Buffer
			if err := Plan(&buf, c, testOptions()); err != nil {
				t.Error(err)
			}
			got[i] = buf.Bytes()
			done <- i
		}()
	}
	for range got {
		<-done
	}
	for i, g := range got {
		if !bytes.Equal(g, want) {
			t.Errorf("rendering %d differs", i)
		}
	}
}
