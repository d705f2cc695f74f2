package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"ridgeflank/evaluate"
	"ridgeflank/thermal"
)

// caution is printed with every table of predictions.
const caution = "Caution: predicted depths and temperatures are model estimates, not for navigation; defer to official charts, surveys and the local hydrographic authority."

// CLI limits (documented in the commands' help).
const (
	maxAges     = 10000 // ages per predict call
	maxParamsKB = 64    // size of a --params file
)

// modelFlags are the flags that choose a cooling model.
type modelFlags struct {
	id, paramsPath string
}

func (m *modelFlags) define(fs *flag.FlagSet) {
	fs.StringVar(&m.id, "model", thermal.IDGDH1, "cooling model: "+strings.Join(thermal.BuiltinIDs(), ", "))
	fs.StringVar(&m.paramsPath, "params", "", "JSON file of custom model parameters (overrides --model)")
}

// model returns the chosen model; bad choices are usageErrors.
func (m *modelFlags) model() (thermal.Model, error) {
	if m.paramsPath == "" {
		mod, err := thermal.Builtin(m.id)
		if err != nil {
			return nil, usagef("%v", err)
		}
		return mod, nil
	}
	f, err := os.Open(m.paramsPath)
	if err != nil {
		return nil, usagef("cannot read the parameter file: %v", err)
	}
	defer f.Close()
	var buf bytes.Buffer
	if _, err := buf.ReadFrom(io.LimitReader(f, maxParamsKB*1024+1)); err != nil {
		return nil, usagef("cannot read the parameter file %s: %v", m.paramsPath, err)
	}
	if buf.Len() > maxParamsKB*1024 {
		return nil, usagef("the parameter file %s is larger than %d KB", m.paramsPath, maxParamsKB)
	}
	// An optional field given as 0 is refused, not taken for absent (the API's rule).
	p, err := thermal.DecodeParams(buf.Bytes())
	if err != nil && !errors.Is(err, thermal.ErrInvalidParams) {
		return nil, usagef("the parameter file %s is not valid parameter JSON: %v", m.paramsPath, err)
	}
	if err != nil {
		return nil, usagef("the parameter file %s: %v", m.paramsPath, err)
	}
	mod, err := thermal.NewModel(p)
	if err != nil {
		return nil, usagef("the parameter file %s: %v", m.paramsPath, err)
	}
	return mod, nil
}

// parseAge parses one age in Ma: a finite number from 0 to evaluate.MaxAgeMa (checked by
// evaluate.CheckAges, the rule the API applies too).
func parseAge(s string) (float64, error) {
	s = strings.TrimSpace(s)
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, usagef("age %q is not a number of Ma", s)
	}
	if err := evaluate.CheckAges("age", v); err != nil {
		return 0, err
	}
	return v, nil
}

// parseAges parses a comma-separated list of ages.
func parseAges(list string) ([]float64, error) {
	if strings.TrimSpace(list) == "" {
		return nil, usagef("--age is required, e.g. --age 0,10,50,100")
	}
	parts := strings.Split(list, ",")
	if len(parts) > maxAges {
		return nil, usagef("%d ages given; at most %d are allowed per call", len(parts), maxAges)
	}
	ages := make([]float64, 0, len(parts))
	for _, p := range parts {
		v, err := parseAge(p)
		if err != nil {
			return nil, err
		}
		ages = append(ages, v)
	}
	return ages, nil
}

// ageCurveFlags are the flags of the commands that answer a model's values at a list of ages
// (predict, ridge-push): the model flags, --age and --format.
type ageCurveFlags struct {
	model  modelFlags
	ages   *string
	format *string
}

// define adds the flags to fs; example is the --age example in the help.
func (a *ageCurveFlags) define(fs *flag.FlagSet, example string) {
	a.model.define(fs)
	a.ages = fs.String("age", "", "comma-separated seafloor ages in Ma, e.g. "+example+" (required)")
	a.format = fs.String("format", "table", "output format: table, csv or json")
}

// resolve checks --format, reads --age and builds the model, after parsing.
func (a *ageCurveFlags) resolve() ([]float64, thermal.Model, error) {
	if err := checkFormat(*a.format); err != nil {
		return nil, nil, err
	}
	ages, err := parseAges(*a.ages)
	if err != nil {
		return nil, nil, err
	}
	m, err := a.model.model()
	if err != nil {
		return nil, nil, err
	}
	return ages, m, nil
}

// checkFormat validates --format.
func checkFormat(f string) error {
	switch f {
	case "table", "csv", "json":
		return nil
	}
	return usagef("format %q is not one of table, csv, json", f)
}

// jsonNumber is a float64 that encodes NaN and ±Inf as JSON null (age 0
// has infinite heat flow and subsidence rate).
type jsonNumber float64

func (n jsonNumber) MarshalJSON() ([]byte, error) {
	v := float64(n)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(v)
}

// fmtNum formats v with the given decimals; infinities as "inf", NaN as "nan".
func fmtNum(v float64, decimals int) string {
	switch {
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	case math.IsNaN(v):
		return "nan"
	}
	return strconv.FormatFloat(v, 'f', decimals, 64)
}

// modelLine describes the model for table output.
func modelLine(m thermal.Model) string {
	p := m.Params()
	name := p.Name
	if name == "" {
		name = p.ID
	}
	if p.Source != "" {
		return fmt.Sprintf("Model: %s, %s (%s)", name, p.Kind, p.Source)
	}
	return fmt.Sprintf("Model: %s, %s", name, p.Kind)
}

// writeErr wraps an output failure (exit status 1).
func writeErr(err error) error {
	if err == nil {
		return nil
	}
	return errors.New("cannot write the output: " + err.Error())
}

// cliFacts are the facts a CSV file of model m written by the command line carries: the model,
// the navigation caution and the provenance (software and the model's parameters).
func cliFacts(m thermal.Model) evaluate.CSVFacts {
	ref := evaluate.NewModelRef(m.Params())
	return evaluate.CSVFacts{Model: ref.ID, Caution: caution,
		Provenance: evaluate.Provenance{Software: "ridgeflank " + version, Model: ref}}
}
