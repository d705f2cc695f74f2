package demobasin

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// FilePrefix starts the name of every file WriteFiles writes.
const FilePrefix = "quillon-basin-synthetic"

// Layer is one grid of the basin with the metadata written with it.
type Layer struct {
	// Key is a short name: "age", "elevation" or "sediment_thickness".
	Key  string
	Grid *geo.Grid
	Meta gdal.Meta
}

// Layers returns the basin's grids with their file metadata, each labelled SYNTHETIC.
func (b *Basin) Layers() []Layer {
	src := fmt.Sprintf("ridgeflank demobasin generator (seed %d, %g° cells): invented %s data; "+
		"GDH1 plate model (Stein & Stein 1992) + injected swell, seamounts, fracture zones and noise, "+
		"loaded by sediment with the Sclater & Christie (1980) shale law", b.Seed, b.CellDeg, Label)
	md := func(what string) map[string]string {
		return map[string]string{
			"synthetic":  "true",
			"label":      Label,
			"basin":      Title,
			"caution":    Caution,
			"quantity":   what + " (" + Label + ")",
			"demo_seed":  fmt.Sprint(b.Seed),
			"demo_model": ModelID + " (" + Label + " demo)",
		}
	}
	return []Layer{
		{Key: "age", Grid: b.Age, Meta: gdal.Meta{
			Name: "synthetic_age", LongName: "seafloor age (SYNTHETIC)", Units: "Ma",
			Title: Title + " seafloor age", Source: src, Metadata: md("seafloor age, Ma"),
		}},
		{Key: "elevation", Grid: b.Elevation, Meta: gdal.Meta{
			Name: "synthetic_elevation", LongName: "seafloor elevation, positive up (SYNTHETIC)", Units: "m",
			Title: Title + " seafloor elevation (positive up)", Source: src, Sense: ElevationSense,
			Metadata: md("seafloor elevation, m, positive up, sediment-loaded"),
		}},
		{Key: "sediment_thickness", Grid: b.Sediment, Meta: gdal.Meta{
			Name: "synthetic_sediment_thickness", LongName: "sediment thickness (SYNTHETIC)", Units: "m",
			Title: Title + " sediment thickness", Source: src, Metadata: md("sediment thickness, m"),
		}},
		{Key: "age_uncertainty", Grid: b.AgeSigma, Meta: gdal.Meta{
			Name: "synthetic_age_uncertainty", LongName: "seafloor age uncertainty, 1 sigma (SYNTHETIC)", Units: "Ma",
			Title: Title + " seafloor age uncertainty", Source: src, Metadata: md("seafloor age uncertainty (1 sigma), Ma"),
		}},
	}
}

// WriteCOG writes the layer into dir as the Cloud-Optimized GeoTIFF WriteFiles writes for it
// (FilePrefix-KEY.tif) and returns its path.
func (l Layer) WriteCOG(dir string) (string, error) {
	p := filepath.Join(dir, FilePrefix+"-"+strings.ReplaceAll(l.Key, "_", "-")+".tif")
	return p, gdal.WriteCOG(p, l.Grid, l.Meta)
}

// WriteFiles writes the basin into dir (created if needed) as Cloud-Optimized GeoTIFFs (age,
// elevation, sediment thickness), a CF netCDF of the age grid and a README, all named
// FilePrefix-* and labelled SYNTHETIC, and returns the paths written.
func WriteFiles(dir string, b *Basin) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("create %s: %w", dir, err)
	}
	var paths []string
	layers := b.Layers()
	for _, l := range layers {
		p, err := l.WriteCOG(dir)
		if err != nil {
			return paths, err
		}
		paths = append(paths, p)
	}
	p := filepath.Join(dir, FilePrefix+"-age.nc")
	if err := gdal.WriteNetCDF(p, layers[0].Grid, layers[0].Meta); err != nil {
		return paths, err
	}
	paths = append(paths, p)
	p = filepath.Join(dir, "README-"+FilePrefix+".txt")
	if err := os.WriteFile(p, []byte(b.Readme()), 0o644); err != nil {
		return paths, fmt.Errorf("write %s: %w", p, err)
	}
	return append(paths, p), nil
}

// Readme is the text of the README written beside the files; every line says SYNTHETIC.
func (b *Basin) Readme() string {
	var s strings.Builder
	line := func(f string, a ...any) { fmt.Fprintf(&s, "SYNTHETIC | "+f+"\n", a...) }
	line("%s: an invented ocean basin for demonstrations and tests.", Title)
	line("%s", Caution)
	line("Footprint %g..%g E, %g..%g N, %g° cells (%d × %d), seed %d.", WestLon, EastLon, SouthLat, NorthLat, b.CellDeg, b.Age.NX, b.Age.NY, b.Seed)
	line("Ridge: %d segments offset by transform faults at latitudes %v; half-spreading %g mm/yr west, %g mm/yr east.",
		len(ridgeSegments), TransformLats(), HalfRateWestMmYr, HalfRateEastMmYr)
	line("Depth: GDH1 plate model (Stein & Stein 1992) from age, minus a %g m swell (radius %g km) at %g, %g,", SwellAmplitudeM, SwellRadiusKm, SwellCentreLon, SwellCentreLat)
	line("minus %d seamounts, plus %g m fracture-zone troughs and %g m noise, then loaded by sediment (Sclater & Christie 1980 shale).", len(seamounts), FractureZoneTroughM, b.NoiseStdM)
	line("Sediment: %g m/Myr with age plus a wedge of %g m thinning west from an invented margin at %g E.", PelagicRateMPerMyr, MarginSedimentM, MarginLon)
	line("Age uncertainty (1 sigma): %g Ma + %g × age, plus up to %g Ma across each fracture zone.", AgeSigmaBaseMa, AgeSigmaFraction, AgeSigmaFractureZoneMa)
	line("Elevation is stored positive UP (negative below sea level); age in Ma; sediment thickness in m.")
	return s.String()
}
