package evaluate

import (
	"context"
	"io"
	"time"

	"ridgeflank/report"
	"ridgeflank/survey"
)

// PlanReport writes the printable report of check c (report.Plan) as a PDF (format "pdf", every
// page) or one PNG page (format "png", page from 1), with the provenance of what c was checked
// under: this service's version, the dataset and its grids with their content hashes, the
// cooling model with the hash of its parameters, and the compaction law. generated is the date
// the report prints (the report never reads the clock). Every way in that prints a plan calls
// this, so the CLI's report and the API's are the same bytes for the same check and date.
func (s *Service) PlanReport(ctx context.Context, w io.Writer, c *survey.Check, format string, page int, generated time.Time) error {
	st := c.Plan.Settings
	q, err := s.load(ctx, st.Dataset, Options{Model: st.Model, Sediment: st.Sediment})
	if err != nil {
		return planFault(err)
	}
	ref := s.ModelRef(q.Model)
	prov := report.Provenance{
		Software:  "ridgeflank " + s.version,
		Dataset:   q.Dataset.Row.ID,
		Model:     ref.ID + " (parameters sha256 " + ref.ParamsSHA256 + ")",
		Sediment:  q.Sediment.Name,
		Generated: generated,
	}
	for _, g := range q.Dataset.Refs {
		prov.Grids = append(prov.Grids, g.Role+": "+g.ID+" sha256 "+g.SHA256)
	}
	return report.Plan(w, c, report.Options{Format: format, Page: page, Provenance: prov})
}
