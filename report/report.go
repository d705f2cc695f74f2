package report

import (
	"bytes"
	"fmt"
	"image/color"
	"image/png"
	"io"
	"strings"
	"sync"
	"time"

	pdf "codeberg.org/go-pdf/fpdf"
	stdfont "golang.org/x/image/font"
	"golang.org/x/text/encoding"
	"golang.org/x/text/encoding/charmap"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"

	"ridgeflank/fault"
	"ridgeflank/survey"
)

// Limits and defaults of a report.
const (
	DefaultTitle = "Survey plan check"
	DefaultDPI   = 150 // PNG resolution, dots per inch
	MinDPI       = 36
	MaxDPI       = 600
	MaxPages     = 400 // a longer report is refused (lines are drawn two to a page)
	MaxTitleLen  = 200 // characters
)

// Page sizes, portrait, width × height.
var pageSizes = map[string][2]vg.Length{
	"a4":     {210 * vg.Millimeter, 297 * vg.Millimeter}, // ISO 216
	"letter": {8.5 * vg.Inch, 11 * vg.Inch},              // ANSI/ASME Y14.1
}

// Provenance says where a check came from. Every field is printed as given; Generated is the
// only date the report shows and also the PDF's creation and modification date: the report
// never reads the clock, so the same check and options give the same bytes.
type Provenance struct {
	Software  string    // name and version of the service, e.g. "ridgeflank 1.4.0"
	Dataset   string    // dataset id (and source, if wanted)
	Model     string    // cooling model id and parameter hash
	Sediment  string    // compaction law
	Grids     []string  // one entry per input grid: role, id, content hash
	Generated time.Time // when the check was made (required; printed in UTC)
}

// Options choose the output of Plan.
type Options struct {
	Format     string // "pdf" (every page; the default) or "png" (one page)
	Page       int    // PNG: page number from 1; 0 is 1
	DPI        int    // PNG: dots per inch, MinDPI..MaxDPI; 0 is DefaultDPI
	PageSize   string // "a4" (210 × 297 mm; the default) or "letter" (8.5 × 11 in), portrait
	Title      string // heading of every page; "" is DefaultTitle
	Provenance Provenance
}

// Plan writes the report of check c to w: every page as one PDF, or page o.Page as a PNG image
// of o.DPI. Pages: a summary (settings, provenance, totals, a map of the plan), the depth profile
// of each line (two to a page), then the leg, transit, hazard and coverage-gap tables. Every page
// carries c.Caution; a check without one is refused. Bad options are faults of kind
// fault.InvalidParameter or fault.UnsupportedFormat naming the option; a report longer than
// MaxPages is fault.LimitExceeded.
func Plan(w io.Writer, c *survey.Check, o Options) error {
	d, err := layout(c, o)
	if err != nil {
		return err
	}
	switch d.o.Format {
	case "png":
		if d.o.Page > len(d.pages) {
			return fault.New(fault.InvalidParameter, "page", "report: page %d asked, the report has %d pages", d.o.Page, len(d.pages))
		}
		cv := vgimg.NewWith(vgimg.UseWH(d.w, d.h), vgimg.UseDPI(d.o.DPI), vgimg.UseBackgroundColor(color.White))
		d.drawPage(draw.New(cv), d.o.Page-1)
		// Fastest deflate: page images are mostly flat colour, so it costs little in size and
		// takes about a fifth off the time of a page (BenchmarkPlanPNGPage, 0.62 → 0.50 s).
		enc := png.Encoder{CompressionLevel: png.BestSpeed}
		return enc.Encode(w, cv.Image())
	default:
		cv := newPDF(d.w, d.h, d.o.Provenance.Generated)
		pc := &pdfCanvas{Canvas: cv, enc: charmap.Windows1252.NewEncoder()}
		for i := range d.pages {
			if i > 0 {
				cv.NextPage()
			}
			d.drawPage(draw.New(pc), i)
		}
		var buf bytes.Buffer
		if _, err := cv.WriteTo(&buf); err != nil {
			return fmt.Errorf("report: writing PDF: %w", err)
		}
		_, err = w.Write(buf.Bytes())
		return err
	}
}

// Pages is the number of pages Plan writes for c under o.
func Pages(c *survey.Check, o Options) (int, error) {
	d, err := layout(c, o)
	if err != nil {
		return 0, err
	}
	return len(d.pages), nil
}

// normalise fills defaults into o and checks it.
func normalise(c *survey.Check, o Options) (Options, error) {
	if c == nil {
		return o, fault.New(fault.InvalidParameter, "check", "report: no check to report")
	}
	if strings.TrimSpace(c.Caution) == "" {
		return o, fault.New(fault.InvalidParameter, "caution", "report: the check carries no caution; a report of expected depths must carry one")
	}
	o.Format = strings.ToLower(o.Format)
	switch o.Format {
	case "":
		o.Format = "pdf"
	case "pdf", "png":
	default:
		return o, fault.New(fault.UnsupportedFormat, "format", "report: format %q is not written (pdf, png)", o.Format)
	}
	if o.Page == 0 {
		o.Page = 1
	}
	if o.Page < 1 {
		return o, fault.New(fault.InvalidParameter, "page", "report: page must be 1 or more, got %d", o.Page)
	}
	if o.DPI == 0 {
		o.DPI = DefaultDPI
	}
	if o.DPI < MinDPI || o.DPI > MaxDPI {
		return o, fault.New(fault.InvalidParameter, "dpi", "report: dpi must be %d to %d, got %d", MinDPI, MaxDPI, o.DPI)
	}
	o.PageSize = strings.ToLower(o.PageSize)
	if o.PageSize == "" {
		o.PageSize = "a4"
	}
	if _, ok := pageSizes[o.PageSize]; !ok {
		return o, fault.New(fault.InvalidParameter, "page_size", "report: page size %q is not known (a4, letter)", o.PageSize)
	}
	if o.Title == "" {
		o.Title = DefaultTitle
	}
	if len([]rune(o.Title)) > MaxTitleLen {
		return o, fault.New(fault.InvalidParameter, "title", "report: title longer than %d characters", MaxTitleLen)
	}
	if o.Provenance.Generated.IsZero() {
		return o, fault.New(fault.InvalidParameter, "generated", "report: the time the check was made is required (the report never reads the clock)")
	}
	o.Provenance.Generated = o.Provenance.Generated.UTC()
	return o, nil
}

// pdfMu guards the package defaults of the PDF library, which are the only way to give a new
// document fixed dates and sorted catalogues (byte-identical output).
var pdfMu sync.Mutex

func newPDF(w, h vg.Length, when time.Time) *vgpdf.Canvas {
	pdfMu.Lock()
	defer pdfMu.Unlock()
	pdf.SetDefaultCatalogSort(true)
	pdf.SetDefaultCreationDate(when)
	pdf.SetDefaultModificationDate(when)
	cv := vgpdf.New(w, h)
	pdf.SetDefaultCreationDate(time.Time{})
	pdf.SetDefaultModificationDate(time.Time{})
	return cv
}

// pdfCanvas mends two things between the plotting library and its PDF backend:
//   - text goes to the PDF in Windows-1252, the code page the backend embeds its fonts with
//     (it would otherwise print the UTF-8 bytes of °, ², · as two letters each); characters
//     outside the code page print as "?";
//   - bold and italic faces are passed as faces of their own name and regular weight, because
//     the backend registers every face under the regular style and then asks for the bold or
//     italic style of that name, which it does not find.
type pdfCanvas struct {
	*vgpdf.Canvas
	enc *encoding.Encoder
}

func (c *pdfCanvas) FillString(f font.Face, pt vg.Point, s string) {
	out, err := encoding.ReplaceUnsupported(c.enc).String(s)
	if err != nil {
		out = s
	}
	if f.Font.Weight != stdfont.WeightNormal || f.Font.Style != stdfont.StyleNormal {
		f.Font.Typeface = font.Typeface(strings.ReplaceAll(f.Font.Name(), "-", ""))
		f.Font.Variant = ""
		f.Font.Weight, f.Font.Style = stdfont.WeightNormal, stdfont.StyleNormal
	}
	c.Canvas.FillString(f, pt, out)
}
