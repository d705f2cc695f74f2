package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/schollz/progressbar/v3"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/ingest"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

var gridCmd = &command{
	Name:    "grid",
	Summary: "compute one parameter over whole grids and write it as a COG or netCDF file",
	Usage: `Usage: ridgeflank grid --parameter ID --out FILE (--age FILE [--depth FILE] [--sediment FILE] [--crust FILE] | --dataset ID [--data DIR | --database-url URL]) [flags]

Computes one parameter over the whole lattice of the age grid and writes it
as a Cloud-Optimized GeoTIFF (--out *.tif) or a CF netCDF-4 file (--out *.nc),
with the numbers the API answers for the same grids, model and sediment set
at the grid's own resolution. Inputs are files (read with GDAL under import's
rules: units converted, vertical sense of bathymetry declared, detected or
forced, implausible values refused) or the grids of a stored dataset.
Companion grids on another lattice than the age grid are sampled bilinearly.

PARAMETER is one of: ` + strings.Join(evaluate.ParameterIDs(), ", ") + `.
Observed, corrected and residual depth need --depth; sediment_thickness needs
--sediment; without --sediment no sediment correction is made; --crust adds
the crustal-thickness correction.

Grids of any size are processed in blocks of rows in bounded memory (peak
about 0.38 GB for 10800 columns, 0.65 GB for 86400 columns: it grows with the
width, not the number of rows); a COG is staged in TMPDIR, which needs free
space for about the output's compressed size. --compress zstd writes a COG
about twice as fast as the default deflate, for readers with ZSTD support.
For batch pipelines that read the result once, --compress none --overviews
none writes an uncompressed COG without overviews straight to --out (no
staging copy and no TMPDIR space; the fastest output, about 4 bytes per
cell; peak 0.22 GB for 10800 columns), and --content-ids=false skips hashing
the inputs. Nothing is left at --out when the command fails. The file
records the model and its parameters, the sediment set, the inputs (file
names and, unless --content-ids=false, the content id import would give
each) and the software version. A progress bar is shown on stderr when it is
a terminal. Prints the path written on stdout.

Predicted depths are model estimates, not for navigation.

Examples:
  ridgeflank grid --parameter residual_depth --age age.nc --depth bathy.tif --vertical auto --sediment sed.nc --out residual.tif
  ridgeflank grid --parameter heat_flow --model psm --age age.nc --out heat_flow.nc
  ridgeflank grid --parameter residual_depth --age age.tif --depth bathy.tif --sediment sed.tif --compress none --overviews none --content-ids=false --out residual.tif
  ridgeflank grid --parameter residual_depth --dataset quillon-basin-synthetic --data ./data --out residual.nc`,
}

func init() {
	gridCmd.Run = runGrid
	register(gridCmd)
}

// gridFlags are grid's flags.
type gridFlags struct {
	dataset, age, depth, sediment, crust     string
	ageUnc                                   string
	depthUnits, sedimentUnits, crustUnits    string
	vertical, model, sedimentSet, param, out string
	format, compress, overviews              string
	workers                                  int
	contentIDs                               bool
	ageSigmaMa                               float64
	loc                                      dbLocationFlags
}

func runGrid(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(gridCmd)
	var f gridFlags
	fs.StringVar(&f.param, "parameter", "", "parameter to compute (required): "+strings.Join(evaluate.ParameterIDs(), ", "))
	fs.StringVar(&f.out, "out", "", "output file (required); .tif/.tiff for COG, .nc for netCDF")
	fs.StringVar(&f.format, "format", "", "output format: cog or netcdf (default: from the --out extension)")
	fs.StringVar(&f.compress, "compress", "deflate", "COG compression: deflate (readable everywhere), zstd (about twice as fast to write, slightly larger) or none (fastest, largest)")
	fs.StringVar(&f.overviews, "overviews", "auto", "COG overviews: auto (reduced-resolution copies down to one tile) or none (for pipelines that read the full resolution)")
	fs.StringVar(&f.dataset, "dataset", "", "stored dataset whose grids to use (instead of --age and the other files)")
	fs.StringVar(&f.age, "age", "", "seafloor age grid file, Ma (required without --dataset)")
	fs.StringVar(&f.depth, "depth", "", "bathymetry grid file (observed depth or elevation)")
	fs.StringVar(&f.depthUnits, "depth-units", "", "units of the bathymetry values (default: the file's, else m)")
	fs.StringVar(&f.vertical, "vertical", "auto", "how the bathymetry file stores it: depth-positive-down, elevation-positive-up or auto (the file's declaration, else the signs of its values)")
	fs.StringVar(&f.sediment, "sediment", "", "sediment thickness grid file")
	fs.StringVar(&f.sedimentUnits, "sediment-units", "", "units of the sediment thickness values (default: the file's, else m)")
	fs.StringVar(&f.crust, "crust", "", "crustal thickness grid file")
	fs.StringVar(&f.crustUnits, "crust-units", "", "units of the crustal thickness values (default: the file's, else km)")
	fs.StringVar(&f.model, "model", evaluate.DefaultModel, "cooling model: "+strings.Join(thermal.BuiltinIDs(), ", ")+", or a stored custom model id (needs the store)")
	fs.StringVar(&f.sedimentSet, "sediment-set", evaluate.DefaultSediment, "compaction set of the sediment correction: "+strings.Join(thermal.CompactionNames(), ", "))
	fs.BoolVar(&f.contentIDs, "content-ids", true, "record each input file's content id (the id import would give it; hashes every value read): --content-ids=false skips it")
	fs.IntVar(&f.workers, "workers", 0, "goroutines computing each block (default: the number of CPUs)")
	fs.StringVar(&f.ageUnc, "age-uncertainty", "", "seafloor-age uncertainty grid file, Ma (one standard deviation): read by the *_uncertainty parameters")
	fs.Float64Var(&f.ageSigmaMa, "age-uncertainty-ma", 0, "one seafloor-age uncertainty, Ma (one standard deviation), for every cell: for the *_uncertainty parameters without an age-uncertainty grid; given, it holds instead of the grid")
	f.loc.define(fs)
	if err := parseFlags(ctx, gridCmd, fs, args, stdout, false); err != nil {
		return err
	}
	format, err := f.check()
	if err != nil {
		return err
	}
	return runGridJob(ctx, &f, format, stdout, stderr)
}

// check validates the flags before any file is read and returns the output format.
func (f *gridFlags) check() (string, error) {
	f.param = strings.TrimSpace(f.param)
	if f.param == "" {
		return "", usagef("say which parameter to compute with --parameter (one of %s)", strings.Join(evaluate.ParameterIDs(), ", "))
	}
	if _, ok := evaluate.ParameterByID(f.param); !ok {
		return "", fault.New(fault.UnknownParameter, "parameter", "parameter %q is not known; choose from %s", f.param, strings.Join(evaluate.ParameterIDs(), ", "))
	}
	if f.out == "" {
		return "", usagef("give the output file with --out")
	}
	if f.dataset == "" && f.age == "" {
		return "", usagef("give the age grid with --age FILE, or a stored dataset with --dataset ID")
	}
	if f.dataset != "" && (f.age != "" || f.depth != "" || f.sediment != "" || f.crust != "" || f.ageUnc != "") {
		return "", usagef("give either --dataset or input files (--age, --depth, --sediment, --crust, --age-uncertainty), not both")
	}
	if f.depth == "" && (f.depthUnits != "" || f.vertical != "auto" && f.vertical != "") {
		return "", usagef("--depth-units and --vertical describe the --depth file; give it")
	}
	switch strings.ToLower(strings.TrimSpace(f.vertical)) {
	case "", "auto", "depth-positive-down", "depth", "elevation-positive-up", "elevation":
	default:
		return "", fault.New(fault.InvalidParameter, "vertical", "--vertical must be depth-positive-down, elevation-positive-up or auto, not %q", f.vertical)
	}
	format := strings.ToLower(strings.TrimSpace(f.format))
	if format == "" {
		switch strings.ToLower(filepath.Ext(f.out)) {
		case ".tif", ".tiff":
			format = "cog"
		case ".nc", ".nc4", ".netcdf":
			format = "netcdf"
		default:
			return "", usagef("cannot tell the format from %q: name it .tif or .nc, or give --format cog|netcdf", filepath.Base(f.out))
		}
	}
	if c := strings.ToLower(strings.TrimSpace(f.compress)); c != "deflate" && c != "zstd" && c != "none" {
		return "", usagef("--compress must be deflate, zstd or none, not %q", f.compress)
	} else {
		f.compress = c
	}
	if o := strings.ToLower(strings.TrimSpace(f.overviews)); o != "auto" && o != "none" {
		return "", usagef("--overviews must be auto or none, not %q", f.overviews)
	} else {
		f.overviews = o
	}
	if format != "cog" && format != "netcdf" {
		return "", usagef("--format must be cog or netcdf, not %q", f.format)
	}
	dir := filepath.Dir(f.out)
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return "", usagef("the directory of --out, %s, does not exist", dir)
	}
	return format, nil
}

// gridBlockBytes bounds one block of output rows (64 rows of a 15-arc-second global grid,
// 256 of coarser ones; at least 16 rows); tests lower it.
var gridBlockBytes = 24 << 20

// gridInput is one opened input: its reader, role and what provenance records about it.
type gridInput struct {
	role   string
	name   string
	reader evaluate.RowReader
	closer func() error
	file   *ingest.Reader // nil for stored grids
	ref    evaluate.GridRef
}

func runGridJob(ctx context.Context, f *gridFlags, format string, stdout, stderr io.Writer) error {
	bar := progressbar.NewOptions(1000,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetVisibility(isTerminal(stderr)),
		progressbar.OptionSetDescription("opening inputs"),
		progressbar.OptionClearOnFinish(),
		progressbar.OptionSetElapsedTime(true),
	)
	defer bar.Finish()
	progress := func(frac float64, msg string) {
		if msg != "" {
			bar.Describe(msg)
		}
		_ = bar.Set(int(1000 * min(max(frac, 0), 1)))
	}

	// The store is needed for a dataset, and for a model that is not built in.
	var st store.Store
	if f.dataset != "" || !evaluate.IsBuiltin(f.model) {
		var err error
		if st, err = f.loc.open(ctx, stderr, false); err != nil {
			return err
		}
		defer st.Close()
	}
	svc := evaluate.New(evaluate.Config{Store: st, Version: version})
	// Uncompressed GeoTIFF inputs are read straight into the block buffers rather than
	// through GDAL's block cache (one copy less: 20–30% less user time of a 10800×5400 run,
	// measured on this project's machine); other inputs are not affected. The environment
	// may say otherwise. (Single-band float32 ones in the machine's byte order are read by
	// ingest.Reader itself, gdal.ReadOptions.RawTiles, whatever this says.)
	if _, set := os.LookupEnv("GTIFF_DIRECT_IO"); !set {
		gdal.SetConfigOptions(map[string]string{"GTIFF_DIRECT_IO": "YES"})
	}

	var inputs []*gridInput
	defer func() {
		for _, in := range inputs {
			in.closer()
		}
	}()
	var gin evaluate.GridInputs
	var notes []string
	if f.dataset != "" {
		d, err := svc.DatasetMeta(ctx, f.dataset)
		if err != nil {
			return err
		}
		gin.Name, gin.DepthSense = f.dataset, d.DepthSense
		for _, ref := range d.Refs {
			in, err := openStoredGrid(ctx, st, f.dataset, ref)
			if err != nil {
				return err
			}
			inputs = append(inputs, in)
		}
		if ref := d.AgeUncertaintyRef; ref.ID != "" {
			in, err := openStoredGrid(ctx, st, f.dataset, ref)
			if err != nil {
				return err
			}
			inputs = append(inputs, in)
		}
	} else {
		gin.Name = filepath.Base(f.age)
		kindDepth, vertical := store.KindDepth, "auto"
		switch strings.ToLower(strings.TrimSpace(f.vertical)) {
		case "depth-positive-down", "depth":
			vertical = "depth"
		case "elevation-positive-up", "elevation":
			kindDepth, vertical = store.KindElevation, "elevation"
		}
		for _, spec := range []struct {
			path, role string
			req        ingest.Request
		}{
			{f.age, evaluate.PSeafloorAge, ingest.Request{Kind: store.KindAge}},
			{f.depth, evaluate.PObservedDepth, ingest.Request{Kind: kindDepth, Units: f.depthUnits, Vertical: vertical}},
			{f.sediment, evaluate.PSedimentThickness, ingest.Request{Kind: store.KindSedimentThickness, Units: f.sedimentUnits}},
			{f.crust, evaluate.RoleCrust, ingest.Request{Kind: store.KindCrustalThickness, Units: f.crustUnits}},
			{f.ageUnc, evaluate.RoleAgeUncertainty, ingest.Request{Kind: store.KindAgeUncertainty}},
		} {
			if spec.path == "" {
				continue
			}
			req := spec.req
			req.Path = spec.path
			name := filepath.Base(spec.path)
			r, err := ingest.OpenReader(ctx, req, func(fr float64) { progress(0.05*fr, "checking the values of "+name) })
			if err != nil {
				return fmt.Errorf("%s file: %w", strings.ReplaceAll(spec.role, "_", " "), err)
			}
			for _, n := range r.Notes() {
				// Import's wording is about storing; grid only reads.
				notes = append(notes, name+": "+strings.ReplaceAll(n, "stored as", "read as"))
			}
			if !f.contentIDs {
				r.SkipContentID()
			}
			inputs = append(inputs, &gridInput{role: spec.role, name: name, reader: r, closer: r.Close, file: r})
			if spec.role == evaluate.PObservedDepth {
				gin.DepthSense = r.Sense()
			}
		}
	}
	for _, in := range inputs {
		switch in.role {
		case evaluate.PSeafloorAge:
			gin.Age = in.reader
		case evaluate.PObservedDepth:
			gin.Depth = in.reader
		case evaluate.PSedimentThickness:
			gin.Sediment = in.reader
		case evaluate.RoleCrust:
			gin.Crust = in.reader
		case evaluate.RoleAgeUncertainty:
			gin.AgeUncertainty = in.reader
		}
	}
	gin.Workers = f.workers
	q, err := svc.ResolveGrid(ctx, gin, evaluate.Options{Model: f.model, Sediment: f.sedimentSet, Parameters: []string{f.param}, AgeUncertaintyMa: f.ageSigmaMa})
	if err != nil {
		return err
	}
	p := q.Params[0]
	lattice := gin.Age.Header()
	lattice.Data = nil

	// The output, written block by block.
	meta := gdal.Meta{Name: p.ID, LongName: p.Label, Units: p.Unit,
		Title:  fmt.Sprintf("%s (%s) computed by ridgeflank", p.Label, p.Unit),
		Source: "ridgeflank grid from " + gin.Name}
	switch p.ID {
	case evaluate.PPredictedDepth, evaluate.PCorrectedDepth, evaluate.PObservedDepth:
		meta.Sense = geo.DepthPositiveDown
	}
	prov := gridProvenance(svc, q, f, inputs)
	meta.Metadata = prov
	var (
		rowsPerBlock int
		write        func(row0 int, v []float32) error
		finish       func(extra map[string]string) error
		abandon      func() error
	)
	blockBytes := gridBlockBytes
	if format == "cog" {
		cogw, err := gdal.NewCOGStream(lattice, gdal.StreamOptions{BlockBytes: blockBytes, Compress: f.compress, NoOverviews: f.overviews == "none", Destination: f.out})
		if err != nil {
			return err
		}
		rowsPerBlock, write, abandon = cogw.BlockRows(), cogw.WriteRows, cogw.Close
		finish = func(extra map[string]string) error {
			for k, v := range extra {
				meta.Metadata[k] = v
			}
			return cogw.Finish(ctx, f.out, meta, func(fr float64) { progress(0.6+0.4*fr, "writing cloud-optimized GeoTIFF") })
		}
	} else {
		ncw, err := gdal.NewNetCDFStream(f.out, lattice, meta)
		if err != nil {
			return err
		}
		rowsPerBlock = gdal.NetCDFBlockRows(lattice.NX, blockBytes)
		write, finish, abandon = ncw.WriteRows, ncw.Finish, ncw.Close
	}
	defer abandon()
	computeEnd := 1.0
	if format == "cog" {
		computeEnd = 0.6
	}
	progress(0.05, "computing "+p.ID)
	flags, err := svc.EvaluateGrid(ctx, q, gin, rowsPerBlock, func(row0 int, v []float32) error {
		if err := write(row0, v); err != nil {
			return err
		}
		rows := row0 + len(v)/lattice.NX
		progress(0.05+(computeEnd-0.05)*float64(rows)/float64(lattice.NY), "")
		return nil
	})
	if err != nil {
		return err
	}
	extra := map[string]string{}
	for _, in := range inputs {
		if in.file != nil {
			if id := in.file.ContentID(); id != "" {
				extra["ridgeflank_input_"+in.role] = fmt.Sprintf("%s (content id %s, as import would store it)", in.name, id)
			}
		}
	}
	if len(flags) > 0 {
		var parts []string
		for _, fl := range flags {
			parts = append(parts, fmt.Sprintf("%d values refused because of %s: %s", fl.Count, fl.Input, fl.Reason))
			notes = append(notes, parts[len(parts)-1])
		}
		extra["ridgeflank_refused"] = strings.Join(parts, "; ")
	}
	if err := finish(extra); err != nil {
		return err
	}
	_ = bar.Finish()
	for _, n := range notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	fmt.Fprintf(stderr, "wrote %s (%s, %d × %d) to %s\n", p.ID, p.Unit, lattice.NX, lattice.NY, f.out)
	if _, err := fmt.Fprintln(stdout, f.out); err != nil {
		return writeErr(err)
	}
	return nil
}

// gridProvenance is the metadata grid records: evaluate's provenance (software, model and its
// parameters, sediment set, dataset and stored grids, caution) plus the parameter and the
// input files by name (their content ids are added once read).
// openStoredGrid opens the stored grid ref of dataset id for reading by rows.
func openStoredGrid(ctx context.Context, st store.Store, id string, ref evaluate.GridRef) (*gridInput, error) {
	row, err := st.GetGrid(ctx, ref.ID)
	if err != nil {
		return nil, fmt.Errorf("dataset %s: grid %s: %w", id, ref.ID, err)
	}
	path, err := st.Blobs().Path(row.Path)
	if err != nil {
		return nil, err
	}
	opt := gdal.ReadOptions{Registration: map[store.Registration]string{store.CellCentre: "cell-centre", store.Node: "node"}[row.Registration]}
	ds, err := gdal.Open(path, opt)
	if err != nil {
		return nil, fmt.Errorf("dataset %s: reading grid %s: %w", id, ref.ID, err)
	}
	return &gridInput{role: ref.Role, name: ref.ID, reader: ds, closer: ds.Close, ref: ref}, nil
}

func gridProvenance(svc *evaluate.Service, q *evaluate.Query, f *gridFlags, inputs []*gridInput) map[string]string {
	if f.dataset != "" {
		for _, in := range inputs {
			if in.ref.Role == evaluate.RoleAgeUncertainty {
				q.Dataset.AgeUncertaintyRef = in.ref
				continue
			}
			q.Dataset.Refs = append(q.Dataset.Refs, in.ref)
		}
	} else {
		q.Dataset.Row.ID = ""
	}
	m := svc.Provenance(q).Metadata()
	m["ridgeflank_parameter"] = q.Params[0].ID
	if q.Params[0].NeedsDepth && q.Params[0].Predicted {
		m["ridgeflank_sediment"] = q.Sediment.Name
	}
	var names []string
	for _, in := range inputs {
		if in.file != nil {
			m["ridgeflank_input_"+in.role] = in.name
			names = append(names, in.name)
		}
	}
	sort.Strings(names)
	if len(names) > 0 {
		m["ridgeflank_inputs"] = strings.Join(names, ", ")
	}
	return m
}
