package server

import (
	"math"
	"net/http"
	"strconv"
	"strings"

	"ridgeflank/evaluate"
)

// Parameter names of the EDR collections (the one list is evaluate.Parameters).
const (
	PSeafloorAge       = evaluate.PSeafloorAge
	PObservedDepth     = evaluate.PObservedDepth
	PSedimentThickness = evaluate.PSedimentThickness
	PPredictedDepth    = evaluate.PPredictedDepth
	PHeatFlow          = evaluate.PHeatFlow
	PThermalThickness  = evaluate.PThermalThickness
	PCorrectedDepth    = evaluate.PCorrectedDepth
	PResidualDepth     = evaluate.PResidualDepth
	PDepth600C         = evaluate.PDepth600C
)

// queryOptions reads model=, sediment= and parameter-name= into evaluate.Options (checked by
// the evaluate service).
func queryOptions(r *http.Request) evaluate.Options {
	q := queryOf(r)
	o := evaluate.Options{Model: strings.TrimSpace(q.Get("model")), Sediment: q.Get("sediment")}
	if v := strings.TrimSpace(q.Get("age-uncertainty-ma")); v != "" {
		u, err := strconv.ParseFloat(v, 64)
		if err != nil {
			u = math.NaN() // refused by the service, naming age-uncertainty-ma
		}
		o.AgeUncertaintyMa = u
	}
	if names := q.Get("parameter-name"); names != "" {
		// Every name is kept, empty ones too ("a,,b", a trailing comma): the service refuses
		// an empty name rather than this layer dropping it silently.
		for _, n := range strings.Split(names, ",") {
			o.Parameters = append(o.Parameters, strings.TrimSpace(n))
		}
	}
	return o
}
