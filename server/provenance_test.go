package server

import (
	"strings"
	"testing"

	"ridgeflank/evaluate"
)

// TestCachedProvenanceHeader checks that the cached header is the header made afresh, for
// provenances that differ in one header field each (a stale cache entry would repeat the
// previous provenance's value).
func TestCachedProvenanceHeader(t *testing.T) {
	base := Provenance{Software: "ridgeflank test", Model: &evaluate.ModelRef{ID: "gdh1", ParamsSHA256: "aa"},
		Sediment: "shale", Dataset: "d", Grids: []evaluate.GridRef{{ID: "g1", Role: "age", SHA256: "11"}}, Label: "SYNTHETIC"}
	variants := []func(p *Provenance){
		func(*Provenance) {},
		func(p *Provenance) { p.Software = "ridgeflank other" },
		func(p *Provenance) { p.Model = &evaluate.ModelRef{ID: "gdh1", ParamsSHA256: "bb"} },
		func(p *Provenance) { p.Model = &evaluate.ModelRef{ID: "psm", ParamsSHA256: "aa"} },
		func(p *Provenance) { p.Model = nil },
		func(p *Provenance) { p.Sediment = "" },
		func(p *Provenance) { p.Dataset = "e" },
		func(p *Provenance) { p.Grids = []evaluate.GridRef{{ID: "g1", Role: "depth", SHA256: "11"}} },
		func(p *Provenance) { p.Grids = []evaluate.GridRef{{ID: "g1", Role: "age", SHA256: "12"}} },
		func(p *Provenance) {
			p.Grids = append(p.Grids, evaluate.GridRef{ID: "g2", Role: "depth", SHA256: "22"})
		},
		func(p *Provenance) { p.Label = "" },
	}
	seen := map[string]bool{}
	for round := range 2 { // the second round answers from the cache
		for i, v := range variants {
			p := base
			v(&p)
			want := provenanceHeader(p)
			if got := cachedProvenanceHeader(p); got != want {
				t.Errorf("round %d, variant %d: cached %q, made afresh %q", round, i, got, want)
			}
			if round == 0 {
				if seen[want] {
					t.Errorf("variant %d: header %q repeats an earlier variant's", i, want)
				}
				seen[want] = true
			}
		}
	}
	if h := cachedProvenanceHeader(base); !strings.Contains(h, `model_params_sha256="aa"`) || !strings.Contains(h, `grid="age:g1@sha256:11"`) {
		t.Errorf("header %q", h)
	}
}
