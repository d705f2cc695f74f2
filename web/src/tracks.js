// tracks.js: the track panel. A track is drawn on the map or read from a
// GeoJSON, CSV or GPX file, sent to the service's trajectory query (POST with
// a GeoJSON body), and shown as a profile. Hovering the profile marks the
// sample on the map and fills the profile read-out.

import L from "leaflet";
import { request, query } from "./api.js";
import { coverages, positions, rangeValues } from "./coveragejson.js";
import { cumulativeKm, lineFromLatLngs } from "./geometry.js";
import { drawProfile } from "./profile.js";
import { parseTrackFile } from "./trackfiles.js";
import { fmt, fmtLatLon, fmtSigned } from "./format.js";
import { state, availableParameters } from "./state.js";
import * as messages from "./messages.js";

const $ = (id) => document.getElementById(id);
const PROFILE_PARAMS = ["observed_depth", "corrected_depth", "predicted_depth", "residual_depth", "seafloor_age"];
const BUILTIN_MODELS = ["halfspace", "psm", "gdh1"];

export class TracksPanel {
  constructor(map, drawer) {
    this.map = map;
    this.drawer = drawer;
    this.line = null;
    this.coords = null; // [lon, lat][] as drawn or uploaded
    this.profile = null;
    this.chart = null;
    this.hoverMarker = L.circleMarker([0, 0], { radius: 7, color: "#000", weight: 2, fillColor: "#00e0ff", fillOpacity: 1, interactive: false, pane: "markerPane" });
    $("track-draw").addEventListener("click", () => messages.guard(() => this.draw()));
    $("track-finish").addEventListener("click", () => this.drawer.finish());
    $("track-clear").addEventListener("click", () => this.clear());
    $("track-file").addEventListener("change", (e) => messages.guard(() => this.upload(e.target.files[0])));
    window.addEventListener("resize", () => this.chart?.setSize({ width: Math.max(320, $("profile-chart").clientWidth), height: 190 }));
  }

  async draw() {
    this.setMode("drawing");
    $("track-hint").textContent = "Click the map to add waypoints (or focus the map, pan with the arrow keys and press Space); double-click, press Enter or use Finish to end the track; Escape cancels.";
    const pts = await this.drawer.start("line", { colour: "#006d77" });
    $("track-hint").textContent = "";
    this.setMode("idle");
    if (!pts) return;
    await this.use(lineFromLatLngs(pts).coordinates, "drawn track");
  }

  async upload(file) {
    if (!file) return;
    const text = await file.text();
    let coords;
    try {
      coords = parseTrackFile(file.name, text);
    } catch (err) {
      throw new Error(`${file.name}: ${err.message}`);
    } finally {
      $("track-file").value = "";
    }
    await this.use(coords, file.name);
    this.map.fitBounds(this.line.getBounds(), { padding: [40, 40], maxZoom: 9, animate: false });
  }

  setMode(mode) {
    $("tracks").dataset.mode = mode;
    $("track-draw").hidden = mode === "drawing";
    $("track-finish").hidden = mode !== "drawing";
  }

  /** use shows coords ([lon, lat][]) on the map and computes their profile. */
  async use(coords, name) {
    this.coords = coords;
    this.name = name;
    this.hoverMarker.remove();
    this.line?.remove();
    this.line = L.polyline(coords.map(([lon, lat]) => [lat, lon]), { color: "#006d77", weight: 3 }).addTo(this.map);
    await this.compute();
  }

  async trajectory(coords, params, model) {
    return request(
      `/api/collections/${encodeURIComponent(state.datasetId)}/trajectory${query({ "parameter-name": params.join(","), model })}`,
      {
        method: "POST",
        body: { type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: coords } },
        headers: { "Content-Type": "application/geo+json", Accept: "application/vnd.cov+json, application/problem+json" },
        what: `Computing the track profile (${model})`,
      },
    );
  }

  /** compute asks the service for the profile along the current track. */
  async compute() {
    if (!this.coords) return;
    const box = $("profile");
    box.hidden = false;
    box.dataset.state = "loading";
    $("profile-readout").dataset.index = "";
    $("profile-status").textContent = "Computing the profile…";
    if (!state.datasetId) {
      box.dataset.state = "empty";
      $("profile-status").textContent = "Choose a dataset first.";
      return;
    }
    const offered = availableParameters();
    const params = PROFILE_PARAMS.filter((p) => !offered || offered.includes(p));
    try {
      const doc = await this.trajectory(this.coords, params, state.model);
      const cov = coverages(doc)[0];
      if (!cov) throw new Error("The service answered the trajectory query with no coverage.");
      const pos = positions(cov);
      // Geodesic distance along the track from the service, else great-circle sums.
      const extra = cov["ridgeflank:samples"]?.distance_km || doc["ridgeflank:samples"]?.distance_km;
      const dist = Array.isArray(extra) && extra.length === pos.length ? extra.map(Number) : cumulativeKm(pos);
      const p = {
        positions: pos,
        distanceKm: dist,
        observed: rangeValues(cov, "observed_depth"),
        corrected: rangeValues(cov, "corrected_depth"),
        predicted: rangeValues(cov, "predicted_depth"),
        residual: rangeValues(cov, "residual_depth"),
        age: rangeValues(cov, "seafloor_age"),
        bandLow: null,
        bandHigh: null,
        bandLabel: "",
      };
      await this.addBand(p);
      this.profile = p;
      this.render();
      box.dataset.state = "done";
      const n = p.distanceKm.length;
      const withData = (p.observed || []).filter((v) => v !== null).length;
      $("profile-status").textContent = n
        ? `${this.name}: ${n} samples over ${fmt(p.distanceKm[n - 1], 1, "km")}${withData < n ? `, ${n - withData} without observed depth` : ""}. Model ${state.model}.`
        : `${this.name}: the track has no samples inside the dataset.`;
    } catch (err) {
      box.dataset.state = "error";
      $("profile-status").textContent = err.message;
      throw err;
    }
  }

  /**
   * addBand sets the uncertainty band of the predicted depth: the range of
   * predicted depth over the built-in cooling models (the spread between
   * published models for the same seafloor age), when the service answers.
   */
  async addBand(p) {
    if (!p.predicted) return;
    const others = BUILTIN_MODELS.filter((m) => m !== state.model);
    const answers = await Promise.all(
      others.map((m) => this.trajectory(this.coords, ["predicted_depth"], m).then((d) => rangeValues(coverages(d)[0], "predicted_depth")).catch(() => null)),
    );
    const all = [p.predicted, ...answers.filter((a) => a && a.length === p.predicted.length)];
    if (all.length < 2) return;
    p.bandLow = p.predicted.map((_, i) => minOf(all.map((a) => a[i])));
    p.bandHigh = p.predicted.map((_, i) => maxOf(all.map((a) => a[i])));
    p.bandLabel = "range over the built-in cooling models";
  }

  render() {
    const p = this.profile;
    const el = $("profile-chart");
    if (!p || !p.distanceKm.length) {
      el.replaceChildren();
      el.dataset.points = "0";
      return;
    }
    this.chart = drawProfile(el, p, (i) => this.hover(i));
    $("profile-band-note").textContent = p.bandLabel
      ? `Shaded band: ${p.bandLabel}. Hover the chart to mark the sample on the map.`
      : "No uncertainty band is available. Hover the chart to mark the sample on the map.";
  }

  hover(i) {
    const out = $("profile-readout");
    const p = this.profile;
    // Leaving the chart keeps the last sample marked, so it can be read.
    if (i === null || !p || !p.positions[i]) return;
    const [lon, lat] = p.positions[i];
    this.hoverMarker.setLatLng([lat, lon]).addTo(this.map);
    out.dataset.index = String(i);
    out.dataset.markerLon = String(lon);
    out.dataset.markerLat = String(lat);
    const val = (a) => (a ? a[i] : null);
    const set = (id, v, text) => {
      const el = out.querySelector(`[data-param="${id}"]`);
      el.dataset.value = v === null || v === undefined ? "" : String(v);
      el.textContent = text;
    };
    set("distance", p.distanceKm[i], fmt(p.distanceKm[i], 2, "km"));
    set("position", null, fmtLatLon(lat, lon));
    set("seafloor_age", val(p.age), fmt(val(p.age), 2, "Ma"));
    set("observed_depth", val(p.observed), fmt(val(p.observed), 0, "m"));
    set("predicted_depth", val(p.predicted), fmt(val(p.predicted), 0, "m"));
    set("residual_depth", val(p.residual), fmtSigned(val(p.residual), 0, "m"));
  }

  clear() {
    this.drawer.cancel();
    this.line?.remove();
    this.line = null;
    this.coords = null;
    this.profile = null;
    this.chart?.destroy();
    this.chart = null;
    this.hoverMarker.remove();
    $("profile-readout").dataset.index = "";
    $("profile").hidden = true;
    $("profile-chart").replaceChildren();
    this.setMode("idle");
  }

  refresh() {
    if (this.coords) messages.guard(() => this.compute());
  }
}

function minOf(vs) {
  const f = vs.filter((v) => v !== null && Number.isFinite(v));
  return f.length ? Math.min(...f) : null;
}

function maxOf(vs) {
  const f = vs.filter((v) => v !== null && Number.isFinite(v));
  return f.length ? Math.max(...f) : null;
}
