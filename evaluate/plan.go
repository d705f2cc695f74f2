package evaluate

import (
	"context"

	"ridgeflank/fault"
	"ridgeflank/survey"
)

// CheckPlan checks a survey plan against its dataset: every line sampled along WGS84
// geodesics, with expected depth, hazards, swath coverage, sound speed and timing per sample,
// leg, line and plan. progress, if not nil, is called with the fraction done after each line.
func (s *Service) CheckPlan(ctx context.Context, p survey.Plan, progress func(frac float64)) (*survey.Check, error) {
	p = p.WithDefaults()
	if err := p.Validate(s.limits.MaxPlanLines, s.limits.MaxVertices); err != nil {
		return nil, err
	}
	return nil, fault.New(fault.InvalidParameter, "", "plan checks are being built")
}
