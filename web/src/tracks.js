// tracks.js: the track panel. A track is drawn on the map or read from a
// file; either way the service reads it: a file is sent as it is (CSV, GPX or
// GeoJSON) and a drawn track as a GeoJSON LineString to the collection's
// trajectory query (POST). The page then draws what the service answered:
// the sampled track (the coverage domain's positions, which follow the WGS84
// geodesic between waypoints, so the line drawn is the line sampled), the
// waypoints with their names ("ridgeflank:waypoints"), and the profile.
// Hovering the profile marks the sample on the map and fills the profile
// read-out. Errors are the service's problem details, shown as they come.

import L from "leaflet";
import { request, query } from "./api.js";
import { coverages, positions, rangeValues, parameterUnit } from "./coveragejson.js";
import { lineFromLatLngs } from "./geometry.js";
import { drawProfile } from "./profile.js";
import { fmt, fmtLatLon, fmtSigned } from "./format.js";
import { unitText, digitsFor } from "./parameters.js";
import { state, availableParameters } from "./state.js";
import { evaluationParams, sigmaAskable, sigmaSource } from "./evaluation.js";
import * as messages from "./messages.js";
import { loadColourScales } from "./colourscales.js";
import { trackMediaType, waypointsOf, splitAtAntimeridian } from "./trackanswer.js";

const $ = (id) => document.getElementById(id);

// The series the profile chart draws (depths on the left axis, residual on
// the right, age in the read-out); each is asked for only when the chosen
// collection lists it, except the predicted depth's age uncertainty (sigma), which the
// service also answers for a dataset without an age-uncertainty grid when one value is
// given (evaluation.js's sigmaAskable).
const PROFILE_SERIES = { observed: "observed_depth", corrected: "corrected_depth", predicted: "predicted_depth", residual: "residual_depth", age: "seafloor_age", sigma: "predicted_depth_uncertainty" };

export class TracksPanel {
  constructor(map, drawer) {
    this.map = map;
    this.drawer = drawer;
    this.layer = L.featureGroup().addTo(map); // the sampled line and the waypoints
    this.source = null; // {body, type, name}: what is sent to the service
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
    const geometry = lineFromLatLngs(pts);
    await this.useWaypoints(geometry.coordinates, false);
  }

  /** useWaypoints makes a drawn track ([[lon, lat], …]) current; a link restores it (urlstate.js). */
  async useWaypoints(coords, fit = true) {
    const feature = { type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: coords } };
    await this.use({ body: JSON.stringify(feature), type: "application/geo+json", name: "drawn track", waypoints: coords }, fit);
  }

  /** drawnWaypoints are the current track's waypoints when it was drawn (files are not put in links). */
  get drawnWaypoints() {
    return this.source?.waypoints || null;
  }

  /** upload sends the file as it is: the service parses it, once. */
  async upload(file) {
    if (!file) return;
    $("track-file").value = "";
    await this.use({ body: file, type: trackMediaType(file.name), name: file.name }, true);
  }

  setMode(mode) {
    $("tracks").dataset.mode = mode;
    $("track-draw").hidden = mode === "drawing";
    $("track-finish").hidden = mode !== "drawing";
  }

  /** use makes src the current track and computes its profile. */
  async use(src, fit) {
    this.source = src;
    this.hoverMarker.remove();
    this.layer.clearLayers();
    await this.compute();
    // The profile panel now takes room under the map: let Leaflet measure again.
    this.map.invalidateSize({ animate: false });
    if (fit && this.layer.getLayers().length) this.map.fitBounds(this.layer.getBounds(), { padding: [40, 40], maxZoom: 9, animate: false });
    document.dispatchEvent(new Event("ridgeflank:urlstate")); // a drawn track goes into the link
  }

  /** trajectory asks the service for params along the current track with the page's choices and model. */
  async trajectory(params, model) {
    const src = this.source;
    return request(
      `/api/collections/${encodeURIComponent(state.datasetId)}/trajectory${query({ "parameter-name": params.join(","), ...evaluationParams(state), model })}`,
      {
        method: "POST",
        body: src.body,
        headers: { "Content-Type": src.type, Accept: "application/vnd.cov+json, application/problem+json" },
        what: `Computing the profile of ${src.name} (${model})`,
      },
    );
  }

  /** compute asks the service for the profile along the current track. */
  async compute() {
    if (!this.source) return;
    const name = this.source.name;
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
    const offered = availableParameters() || [];
    const withSigma = sigmaAskable(state.collection, state) && offered.includes(PROFILE_SERIES.predicted);
    const params = Object.values(PROFILE_SERIES).filter((p) => offered.includes(p) || (p === PROFILE_SERIES.sigma && withSigma));
    try {
      const doc = await this.trajectory(params, state.model);
      const cov = coverages(doc)[0];
      if (!cov) throw new Error("The service answered the trajectory query with no coverage.");
      const pos = positions(cov);
      const dist = (cov["ridgeflank:samples"] || doc["ridgeflank:samples"])?.distance_km;
      if (!Array.isArray(dist) || dist.length !== pos.length) throw new Error("The service's trajectory answer has no distance along the track for its samples.");
      const p = { positions: pos, distanceKm: dist.map(Number), units: {}, bandLow: null, bandHigh: null, bandLabel: "", sigmaLabel: `predicted depth ±1σ from ${sigmaSource(state)}` };
      for (const [key, id] of Object.entries(PROFILE_SERIES)) {
        p[key] = rangeValues(cov, id);
        p.units[key] = unitText(parameterUnit(cov, id));
      }
      p.waypoints = waypointsOf(doc, cov);
      const scales = await loadColourScales().catch(() => new Map());
      p.spans = Object.fromEntries(Object.entries(PROFILE_SERIES).map(([key, id]) => [key, scales.has(id) ? scales.get(id).max - scales.get(id).min : NaN]));
      this.showOnMap(p);
      await this.addBand(p);
      this.profile = p;
      this.render();
      box.dataset.state = "done";
      box.dataset.waypoints = String(p.waypoints.length);
      const n = p.distanceKm.length;
      const withData = (p.observed || []).filter((v) => v !== null).length;
      const noSigma = withSigma || !p.predicted ? "" : " This dataset has no age-uncertainty grid: give an age uncertainty (Ma, 1σ) in the Map panel for the predicted depth's ±1σ band.";
      $("profile-status").textContent = n
        ? `${name}: ${n} samples over ${fmt(p.distanceKm[n - 1], 1, "km")} along the WGS84 geodesic${p.observed && withData < n ? `, ${n - withData} without observed depth` : ""}. Model ${state.model}.${noSigma}`
        : `${name}: the track has no samples inside the dataset.`;
      box.dataset.sigma = withSigma ? evaluationParams(state)["age-uncertainty-ma"] || "grid" : "none";
    } catch (err) {
      box.dataset.state = "error";
      $("profile-status").textContent = err.message;
      throw err;
    }
  }

  /** showOnMap draws the sampled track and its named waypoints. */
  showOnMap(p) {
    this.layer.clearLayers();
    for (const part of splitAtAntimeridian(p.positions)) L.polyline(part, { color: "#006d77", weight: 3, className: "track-line", smoothFactor: 0 }).addTo(this.layer);
    for (const w of p.waypoints) {
      const m = L.circleMarker([w.lat, w.lon], { radius: 5, color: "#003c43", weight: 2, fillColor: "#ffffff", fillOpacity: 1, className: "track-waypoint" });
      m.bindTooltip(w.name, { permanent: true, direction: "right", offset: [6, 0], className: "waypoint-tooltip" });
      m.addTo(this.layer);
    }
    document.body.dataset.trackSamples = String(p.positions.length);
  }

  /**
   * addBand sets the uncertainty band of the predicted depth: the range of
   * predicted depth over the collection's built-in cooling models
   * (ridgeflank:models.builtin; the spread between published models for the
   * same seafloor age), when the service answers.
   */
  async addBand(p) {
    if (!p.predicted) return;
    const builtin = state.collection?.["ridgeflank:models"]?.builtin || [];
    const others = builtin.filter((m) => m !== state.model);
    const id = PROFILE_SERIES.predicted;
    const answers = await Promise.all(others.map((m) => this.trajectory([id], m).then((d) => rangeValues(coverages(d)[0], id)).catch(() => null)));
    const all = [p.predicted, ...answers.filter((a) => a && a.length === p.predicted.length)];
    if (all.length < 2) return;
    p.bandLow = p.predicted.map((_, i) => minOf(all.map((a) => a[i])));
    p.bandHigh = p.predicted.map((_, i) => maxOf(all.map((a) => a[i])));
    p.bandLabel = "range over the built-in cooling models";
  }

  render() {
    const p = this.profile;
    const el = $("profile-chart");
    const list = $("profile-waypoints");
    list.replaceChildren();
    if (!p || !p.distanceKm.length) {
      el.replaceChildren();
      el.dataset.points = "0";
      return;
    }
    this.chart?.destroy();
    this.chart = drawProfile(el, p, (i) => this.hover(i));
    for (const w of p.waypoints) {
      const li = document.createElement("li");
      li.dataset.distanceKm = String(w.distanceKm);
      li.textContent = `${w.name} · ${fmt(w.distanceKm, 1, "km")} · ${fmtLatLon(w.lat, w.lon)}`;
      list.append(li);
    }
    const bands = [p.bandLabel, p.sigma?.some(Number.isFinite) ? p.sigmaLabel : ""].filter(Boolean);
    $("profile-band-note").textContent = bands.length
      ? `Shaded: ${bands.join("; ")}. Hover the chart to mark the sample on the map.`
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
    const set = (param, v, text) => {
      const el = out.querySelector(`[data-param="${param}"]`);
      if (!el) return;
      el.dataset.value = v === null || v === undefined ? "" : String(v);
      el.textContent = text;
    };
    set("distance", p.distanceKm[i], fmt(p.distanceKm[i], 2, "km"));
    set("position", null, fmtLatLon(lat, lon));
    for (const [key, id] of Object.entries(PROFILE_SERIES)) {
      const v = val(p[key]);
      set(id, v, (key === "residual" ? fmtSigned : fmt)(v, digitsFor(v, p.spans?.[key]), p.units[key]));
    }
  }

  clear() {
    this.drawer.cancel();
    this.layer.clearLayers();
    this.source = null;
    this.profile = null;
    this.chart?.destroy();
    this.chart = null;
    this.hoverMarker.remove();
    $("profile-readout").dataset.index = "";
    $("profile").hidden = true;
    $("profile-chart").replaceChildren();
    $("profile-waypoints").replaceChildren();
    this.setMode("idle");
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
  }

  refresh() {
    if (this.source) messages.guard(() => this.compute());
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
