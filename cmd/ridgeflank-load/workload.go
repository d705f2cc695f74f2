package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"net/http"
	"net/url"
	"slices"
	"time"
)

// The demo basin's dataset, region and extent (demobasin: SYNTHETIC Quillon Basin, 150°W–120°W,
// 45°S–20°S). The box the generator draws from stays 1° inside it.
const (
	demoDataset = "quillon-basin-synthetic"
	demoRegion  = "quillon-basin-synthetic-swell"
	basinWest   = -149.0
	basinEast   = -121.0
	basinSouth  = -44.0
	basinNorth  = -21.0
	parameter   = "residual_depth"
)

// Request kinds and their share of the mixed run (per cent; common practice, no source: reads
// dominate, position queries most of all, writes are few).
var mix = []struct {
	kind   string
	weight int
}{
	{"position", 40},
	{"tile", 22},
	{"area export", 8},
	{"trajectory", 8},
	{"region statistics", 8},
	{"region write", 8},
	{"refused (intended 4xx)", 6},
}

// outcome is one request's result.
type outcome struct {
	kind    string
	status  int
	dur     time.Duration
	refused bool   // answered with an intended 4xx
	err     string // empty when the status was one the request expected
}

type client struct {
	base    string
	token   string
	http    *http.Client
	timeout time.Duration
}

// newHTTPClient is the one client configuration used against ridgeflank and the bare chi server.
func newHTTPClient(workers int) *http.Client {
	return &http.Client{Transport: &http.Transport{
		MaxIdleConns:        2 * workers,
		MaxIdleConnsPerHost: 2 * workers,
		IdleConnTimeout:     time.Minute,
	}}
}

// do sends one request and checks its status against want (intended statuses ≥ 400 count as
// refused, not as errors). The body is read to the end, so the connection is reused.
func (c *client) do(ctx context.Context, kind, method, path string, body []byte, auth bool, want ...int) (outcome, []byte) {
	ctx, cancel := context.WithTimeout(ctx, c.timeout)
	defer cancel()
	var rd io.Reader
	if body != nil {
		rd = bytes.NewReader(body)
	}
	o := outcome{kind: kind}
	req, err := http.NewRequestWithContext(ctx, method, c.base+path, rd)
	if err != nil {
		o.err = err.Error()
		return o, nil
	}
	if body != nil {
		req.Header.Set("Content-Type", "application/geo+json")
	}
	if auth && c.token != "" {
		req.Header.Set("Authorization", "Bearer "+c.token)
	}
	t0 := time.Now()
	resp, err := c.http.Do(req)
	if err != nil {
		o.dur = time.Since(t0)
		o.err = fmt.Sprintf("%s %s: %v", method, path, err)
		return o, nil
	}
	data, rerr := io.ReadAll(resp.Body)
	resp.Body.Close()
	o.dur = time.Since(t0)
	o.status = resp.StatusCode
	switch {
	case rerr != nil:
		o.err = fmt.Sprintf("%s %s: reading the answer: %v", method, path, rerr)
	case slices.Contains(want, resp.StatusCode):
		o.refused = resp.StatusCode >= 400
	default:
		o.err = fmt.Sprintf("%s %s: status %d, want %v: %.200s", method, path, resp.StatusCode, want, bytes.TrimSpace(data))
	}
	return o, data
}

// worker issues the mixed run's requests for one simulated user.
type worker struct {
	c      *client
	rng    *rand.Rand
	prefix string   // region id prefix, unique per worker and run
	n      int      // regions written so far
	mine   []string // regions this worker stored and has not deleted yet
	total  int      // sum of the mix weights
}

func newWorker(c *client, seed uint64, prefix string) *worker {
	t := 0
	for _, m := range mix {
		t += m.weight
	}
	return &worker{c: c, rng: rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15)), prefix: prefix, total: t}
}

func (w *worker) point() (lon, lat float64) {
	return basinWest + (basinEast-basinWest)*w.rng.Float64(), basinSouth + (basinNorth-basinSouth)*w.rng.Float64()
}

// positionPath is an EDR position query at a random point of the basin.
func (w *worker) positionPath() string {
	lon, lat := w.point()
	return fmt.Sprintf("/api/collections/%s/position?coords=POINT(%.4f%%20%.4f)&parameter-name=%s", demoDataset, lon, lat, parameter)
}

// tileXY is the Web Mercator (EPSG:3857) tile at zoom z holding (lon, lat), in the XYZ scheme.
func tileXY(z int, lon, lat float64) (x, y int) {
	n := float64(int(1) << z)
	x = int(math.Floor((lon + 180) / 360 * n))
	r := lat * math.Pi / 180
	y = int(math.Floor((1 - math.Log(math.Tan(r)+1/math.Cos(r))/math.Pi) / 2 * n))
	return x, y
}

var tileZooms = []int{3, 5, 7, 9}

// one issues one request of a kind drawn from the mix.
func (w *worker) one(ctx context.Context) outcome {
	k := w.rng.IntN(w.total)
	kind := mix[len(mix)-1].kind
	for _, m := range mix {
		if k < m.weight {
			kind = m.kind
			break
		}
		k -= m.weight
	}
	switch kind {
	case "position":
		o, _ := w.c.do(ctx, kind, http.MethodGet, w.positionPath(), nil, false, 200)
		return o
	case "tile":
		z := tileZooms[w.rng.IntN(len(tileZooms))]
		lon, lat := w.point()
		x, y := tileXY(z, lon, lat)
		o, _ := w.c.do(ctx, fmt.Sprintf("tile z%d", z), http.MethodGet, fmt.Sprintf("/tiles/%s/%s/%d/%d/%d.png", demoDataset, parameter, z, x, y), nil, false, 200)
		return o
	case "area export":
		// 1.5° × 1.5° (30 × 30 cells of the 0.05° demo grids), answered at once (below the
		// synchronous export limit) as COG, netCDF-CF or CSV.
		lon, lat := w.point()
		lon, lat = min(lon, basinEast-1.5), min(lat, basinNorth-1.5)
		f := []string{"cog", "netcdf", "csv"}[w.rng.IntN(3)]
		o, _ := w.c.do(ctx, kind, http.MethodGet, fmt.Sprintf("/api/collections/%s/area?bbox=%.3f,%.3f,%.3f,%.3f&parameter-name=%s&f=%s",
			demoDataset, lon, lat, lon+1.5, lat+1.5, parameter, f), nil, false, 200)
		return o
	case "trajectory":
		var wkt bytes.Buffer
		wkt.WriteString("LINESTRING(")
		for i := range 3 {
			lon, lat := w.point()
			if i > 0 {
				wkt.WriteString(",")
			}
			fmt.Fprintf(&wkt, "%.4f %.4f", lon, lat)
		}
		wkt.WriteString(")")
		o, _ := w.c.do(ctx, kind, http.MethodGet, fmt.Sprintf("/api/collections/%s/trajectory?coords=%s&parameter-name=%s",
			demoDataset, url.QueryEscape(wkt.String()), parameter), nil, false, 200)
		return o
	case "region statistics":
		id := demoRegion
		if len(w.mine) > 0 && w.rng.IntN(2) == 0 {
			id = w.mine[w.rng.IntN(len(w.mine))]
		}
		o, _ := w.c.do(ctx, kind, http.MethodGet, fmt.Sprintf("/api/collections/%s/locations/%s/statistics?parameter-name=%s", demoDataset, id, parameter), nil, false, 200)
		return o
	case "region write":
		// Keep at most three regions per worker: store a new one, or delete the oldest.
		if len(w.mine) >= 3 {
			id := w.mine[0]
			o, _ := w.c.do(ctx, kind, http.MethodDelete, "/api/regions/"+id, nil, true, 204)
			if o.err == "" {
				w.mine = w.mine[1:]
			}
			return o
		}
		w.n++
		id := fmt.Sprintf("%s-%d", w.prefix, w.n)
		lon, lat := w.point()
		lon, lat = min(lon, basinEast-2), min(lat, basinNorth-2)
		o, _ := w.c.do(ctx, kind, http.MethodPost, "/api/regions", regionBody(id, lon, lat, 2), true, 201)
		if o.err == "" {
			w.mine = append(w.mine, id)
		}
		return o
	default: // refused: bad input and a write without a token, each answered with a problem
		switch w.rng.IntN(3) {
		case 0:
			o, _ := w.c.do(ctx, kind, http.MethodGet, fmt.Sprintf("/api/collections/%s/position?coords=POINT(abc%%20def)&parameter-name=%s", demoDataset, parameter), nil, false, 400)
			return o
		case 1:
			o, _ := w.c.do(ctx, kind, http.MethodGet, fmt.Sprintf("/api/collections/%s/position?coords=POINT(-140%%20-30)&parameter-name=no_such_parameter", demoDataset), nil, false, 400)
			return o
		default:
			o, _ := w.c.do(ctx, kind, http.MethodPost, "/api/regions", regionBody(w.prefix+"-unauthorised", -140, -30, 1), false, 401)
			return o
		}
	}
}

// regionBody is a square GeoJSON Feature of side deg degrees with its south-west corner at (lon, lat).
func regionBody(id string, lon, lat, side float64) []byte {
	f := map[string]any{
		"type": "Feature", "id": id,
		"properties": map[string]any{"name": "SYNTHETIC load-test region " + id},
		"geometry": map[string]any{"type": "Polygon", "coordinates": [][][2]float64{{
			{lon, lat}, {lon + side, lat}, {lon + side, lat + side}, {lon, lat + side}, {lon, lat}}}},
	}
	b, _ := json.Marshal(f)
	return b
}
