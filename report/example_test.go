package report_test

import (
	"bytes"
	"fmt"
	"time"

	"ridgeflank/report"
	"ridgeflank/survey"
)

// A one-line SYNTHETIC check: a summary page, one page of profiles and one of tables.
func ExamplePlan() {
	c := &survey.Check{
		Caution: "model estimate, not for navigation: defer to nautical charts, surveys and the local hydrographic authority",
		Plan:    survey.Plan{Name: "SYNTHETIC example", Settings: survey.Settings{Dataset: "SYNTHETIC", SpeedOnLineKn: 8}},
		Lines: []survey.LineResult{{Name: "A", LengthKm: 10, Samples: survey.Samples{
			Lon: []float64{-20, -19.9}, Lat: []float64{10, 10}, DistanceKm: []float64{0, 10},
			ExpectedDepthM: []float64{4000, 4100}, UncertaintyM: []float64{50, 60},
			DepthSource: []string{survey.SourceObserved, survey.SourcePredicted},
		}}},
	}
	o := report.Options{Provenance: report.Provenance{Software: "ridgeflank", Generated: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)}}
	n, err := report.Pages(c, o)
	if err != nil {
		fmt.Println(err)
		return
	}
	var pdf bytes.Buffer
	if err := report.Plan(&pdf, c, o); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(n, "pages; PDF:", bytes.HasPrefix(pdf.Bytes(), []byte("%PDF-")))
	// Output: 3 pages; PDF: true
}
