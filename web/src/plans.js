// plans.js: the survey-plan panel. A plan is a named set of lines (waypoints
// with optional names) and the settings it is checked under. Lines are drawn
// on the map (click, double-click to end) or typed (decimal degrees or
// degrees and decimal minutes, read as the service reads them), edited on
// the map (planedit.js) or in the waypoint table, saved (POST /api/plans, PUT
// with If-Match), listed and opened (GET /api/plans), and checked (POST
// /api/plans/check): the check panel under the map shows the depth profile
// by source with its uncertainty band, hazards on the profile and the map,
// the legs table, totals, timing, line spacing and swath, the service's
// caution, and CSV, GeoJSON and PDF downloads of the same check.

import L from "leaflet";
import { request, ApiError } from "./api.js";
import { PlanMap } from "./planedit.js";
import { legsOf } from "./geodesic.js";
import { parseLatitude, parseLongitude, formatDDM, formatDecimal } from "./latlon.js";
import { SETTINGS, settingsFrom, planBody, planFromBody, lineProfile, fmtDuration, HAZARD_LABELS } from "./planview.js";
import { drawPlanProfile, planLegend, seriesColours } from "./planprofile.js";
import { splitAtAntimeridian } from "./trackanswer.js";
import { loadColourScales } from "./colourscales.js";
import { fmt, fmtLatLon } from "./format.js";
import { state } from "./state.js";
import { evaluationParams } from "./evaluation.js";
import * as messages from "./messages.js";

const $ = (id) => document.getElementById(id);
const el = (tag, props = {}, ...children) => {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(props)) {
    if (k === "dataset") Object.assign(e.dataset, v);
    else if (k in e) e[k] = v;
    else e.setAttribute(k, v);
  }
  e.append(...children);
  return e;
};

function emptyPlan() {
  return { id: "", version: 0, name: "", description: "", lines: [], settings: {} };
}

export class PlansPanel {
  constructor(map, drawer) {
    this.map = map;
    this.drawer = drawer;
    this.plan = emptyPlan();
    this.selected = -1;
    this.check = null;
    this.checkLine = 0;
    this.chart = null;
    this.stored = [];
    this.planMap = new PlanMap(map, {
      onChange: (i) => this.changed(i),
      onSelect: (i) => {
        this.selected = i;
        this.renderLines();
      },
    });
    this.checkLayer = L.featureGroup().addTo(map); // sampled lines and hazards of the last check
    this.hoverMarker = L.circleMarker([0, 0], { radius: 7, color: "#000", weight: 2, fillColor: "#ffffff", fillOpacity: 1, interactive: false, pane: "markerPane", className: "plan-hover" });
    this.buildSettings();
    $("plan-line-draw").addEventListener("click", () => messages.guard(() => this.drawLine()));
    $("plan-line-finish").addEventListener("click", () => this.drawer.finish());
    $("plan-line-type").addEventListener("click", () => this.addLine({ name: "", waypoints: [] }));
    $("plan-line-delete").addEventListener("click", () => this.deleteLine());
    $("plan-line-name").addEventListener("change", (e) => {
      const line = this.plan.lines[this.selected];
      if (line) {
        line.name = e.target.value.trim();
        this.changed(this.selected);
      }
    });
    $("plan-name").addEventListener("change", (e) => (this.plan.name = e.target.value.trim()));
    $("plan-coord-format").addEventListener("change", () => this.renderWaypoints());
    $("plan-new").addEventListener("click", () => this.open(emptyPlan()));
    $("plan-list-refresh").addEventListener("click", () => messages.guard(() => this.list()));
    $("plan-open").addEventListener("click", () => messages.guard(() => this.openStored($("plan-stored").value)));
    $("plan-save").addEventListener("click", () => messages.guard(() => this.save()));
    $("plan-delete").addEventListener("click", () => messages.guard(() => this.remove()));
    $("plan-check").addEventListener("click", () => messages.guard(() => this.runCheck()));
    for (const f of ["csv", "geojson", "pdf"]) $(`plan-dl-${f}`).addEventListener("click", () => messages.guard(() => this.download(f)));
    $("plan-check-line").addEventListener("change", (e) => this.showCheckLine(Number(e.target.value)));
    $("plan-check-close").addEventListener("click", () => this.closeCheck());
    window.addEventListener("resize", () => this.chart?.setSize({ width: Math.max(320, $("plan-chart").clientWidth), height: 200 }));
    this.renderLines();
  }

  // ---- settings ------------------------------------------------------------

  buildSettings() {
    const form = $("plan-settings");
    for (const f of SETTINGS) {
      const id = `plan-set-${f.key}`;
      const input = el("input", { type: "text", id, name: f.key, inputMode: "decimal", autocomplete: "off", placeholder: "service default" });
      const row = el("div", { className: "field setting", dataset: { key: f.key, ...(f.swath ? { swath: f.swath } : {}) } }, el("label", { htmlFor: id }, `${f.label} (${f.unit})`), input);
      form.append(row);
    }
    const swath = () => {
      const mode = form.querySelector('input[name="swath-mode"]:checked')?.value || "angle";
      for (const row of form.querySelectorAll("[data-swath]")) row.hidden = row.dataset.swath !== mode;
    };
    for (const r of form.querySelectorAll('input[name="swath-mode"]')) r.addEventListener("change", swath);
    swath();
  }

  /** readSettings turns the form into survey.Settings (throws a readable Error). */
  readSettings() {
    const form = $("plan-settings");
    const values = Object.fromEntries(SETTINGS.map((f) => [f.key, form.elements[f.key].value]));
    const mode = form.querySelector('input[name="swath-mode"]:checked')?.value || "angle";
    // The plan's settings take the model and sediment law of the page's choices; survey plan
    // settings have no single age uncertainty (a check uses the dataset's grid).
    const { model, sediment } = evaluationParams(state);
    return settingsFrom(values, mode, { dataset: state.datasetId, model, sediment });
  }

  fillSettings(s) {
    const form = $("plan-settings");
    for (const f of SETTINGS) form.elements[f.key].value = s?.[f.key] ? String(s[f.key]) : "";
    const mode = s?.swath_width_m && !s?.swath_angle_deg ? "width" : "angle";
    form.querySelector(`input[name="swath-mode"][value="${mode}"]`).checked = true;
    form.querySelector(`input[name="swath-mode"][value="${mode}"]`).dispatchEvent(new Event("change"));
  }

  // ---- lines -----------------------------------------------------------------

  async drawLine() {
    $("plans").dataset.mode = "drawing";
    $("plan-line-draw").hidden = true;
    $("plan-line-finish").hidden = false;
    $("plan-hint").textContent = "Click the map to add waypoints; double-click, Enter or Finish ends the line; Escape cancels.";
    const pts = await this.drawer.start("line", { colour: "#006d77" });
    $("plans").dataset.mode = "idle";
    $("plan-line-draw").hidden = false;
    $("plan-line-finish").hidden = true;
    $("plan-hint").textContent = "";
    if (!pts) return;
    this.addLine({ name: "", waypoints: pts.map((p) => ({ lat: p.lat, lon: p.lng, name: "" })) });
  }

  addLine(line) {
    this.plan.lines.push(line);
    this.selected = this.plan.lines.length - 1;
    if (!line.name) line.name = `Line ${this.selected + 1}`;
    this.planMap.setLines(this.plan.lines, this.selected);
    this.changed(this.selected);
  }

  deleteLine() {
    if (this.selected < 0) return;
    this.plan.lines.splice(this.selected, 1);
    this.selected = Math.min(this.selected, this.plan.lines.length - 1);
    this.planMap.setLines(this.plan.lines, this.selected);
    this.changed(this.selected);
  }

  /**
   * changed follows every edit: redraw the lists (or, with table false, only
   * the leg list, so a field being typed in keeps its focus), mark the check
   * stale.
   */
  changed(i, { table = true } = {}) {
    if (i !== undefined && i >= 0) this.selected = i;
    if (table) this.renderLines();
    else this.renderLegs();
    if (this.check) $("plan-check-panel").dataset.stale = "true";
    document.body.dataset.planEdits = String(Number(document.body.dataset.planEdits || 0) + 1);
  }

  renderLines() {
    const ul = $("plan-lines");
    ul.replaceChildren();
    this.plan.lines.forEach((line, i) => {
      const b = el("button", { type: "button", className: "region-item", ariaPressed: String(i === this.selected) }, `${line.name || `Line ${i + 1}`} `, el("small", {}, `${line.waypoints.length} waypoints`));
      b.setAttribute("aria-pressed", String(i === this.selected));
      b.addEventListener("click", () => {
        this.selected = i;
        this.planMap.select(i);
        this.renderLines();
      });
      ul.append(el("li", {}, b));
    });
    if (!this.plan.lines.length) ul.append(el("li", { className: "empty" }, "No lines yet: draw one on the map or type its waypoints."));
    const line = this.plan.lines[this.selected];
    $("plan-line-box").hidden = !line;
    $("plan-line-delete").disabled = !line;
    $("plan-line-name").value = line?.name || "";
    $("plan-name").value = this.plan.name;
    $("plans").dataset.lines = String(this.plan.lines.length);
    $("plans").dataset.planId = this.plan.id;
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
    $("plans").dataset.version = String(this.plan.version || 0);
    $("plan-delete").hidden = !this.plan.id;
    this.renderWaypoints();
  }

  renderWaypoints() {
    const body = $("plan-waypoints").tBodies[0];
    body.replaceChildren();
    const line = this.plan.lines[this.selected];
    if (!line) return;
    const ddm = $("plan-coord-format").value === "ddm";
    const show = (v, lat) => (ddm ? formatDDM(v, lat) : formatDecimal(v));
    const row = (w, k) => {
      const name = el("input", { type: "text", value: w?.name || "", ariaLabel: `Name of waypoint ${k + 1}`, className: "wp-name", autocomplete: "off" });
      const lat = el("input", { type: "text", value: w ? show(w.lat, true) : "", ariaLabel: `Latitude of waypoint ${k + 1}`, className: "wp-lat", autocomplete: "off", spellcheck: false });
      const lon = el("input", { type: "text", value: w ? show(w.lon, false) : "", ariaLabel: `Longitude of waypoint ${k + 1}`, className: "wp-lon", autocomplete: "off", spellcheck: false });
      const tr = el("tr", { dataset: { index: String(k) } }, el("td", {}, w ? String(k + 1) : "+"), el("td", {}, name), el("td", {}, lat), el("td", {}, lon));
      const apply = () => {
        let la;
        let lo;
        try {
          la = parseLatitude(lat.value);
          lat.removeAttribute("aria-invalid");
        } catch (e) {
          if (w || lat.value.trim()) {
            lat.setAttribute("aria-invalid", "true");
            lat.title = e.message;
          }
        }
        try {
          lo = parseLongitude(lon.value);
          lon.removeAttribute("aria-invalid");
        } catch (e) {
          if (w || lon.value.trim()) {
            lon.setAttribute("aria-invalid", "true");
            lon.title = e.message;
          }
        }
        if (la === undefined || lo === undefined) {
          $("plan-hint").textContent = lat.title && lat.getAttribute("aria-invalid") ? lat.title : lon.title && lon.getAttribute("aria-invalid") ? lon.title : "";
          return;
        }
        $("plan-hint").textContent = "";
        if (w) {
          w.lat = la;
          w.lon = lo;
          w.name = name.value.trim();
          lat.value = show(la, true);
          lon.value = show(lo, false);
          this.planMap.setLines(this.plan.lines, this.selected);
          this.changed(this.selected, { table: false });
        } else {
          line.waypoints.push({ lat: la, lon: lo, name: name.value.trim() });
          this.planMap.setLines(this.plan.lines, this.selected);
          this.changed(this.selected);
          // Typing a line: the next blank row is ready for the next waypoint.
          body.querySelector("tr.new-row input.wp-lat")?.focus();
        }
      };
      lat.addEventListener("change", apply);
      lon.addEventListener("change", apply);
      name.addEventListener("change", () => {
        if (!w) return;
        w.name = name.value.trim();
        this.planMap.setLines(this.plan.lines, this.selected);
        this.changed(this.selected, { table: false });
      });
      const cell = el("td");
      if (w) {
        const del = el("button", { type: "button", className: "icon danger", ariaLabel: `Delete waypoint ${k + 1}`, title: "Delete this waypoint" }, "×");
        del.addEventListener("click", () => {
          if (line.waypoints.length > 2) this.planMap.removeVertex(this.selected, k);
          else {
            line.waypoints.splice(k, 1); // a line still being typed may go below two
            this.planMap.setLines(this.plan.lines, this.selected);
            this.changed(this.selected);
          }
        });
        cell.append(del);
      } else {
        tr.className = "new-row";
      }
      tr.append(cell);
      return tr;
    };
    line.waypoints.forEach((w, k) => body.append(row(w, k)));
    body.append(row(null, line.waypoints.length));
    this.renderLegs();
  }

  /** renderLegs lists the selected line's legs: WGS84 length (km, nmi) and initial azimuth. */
  renderLegs() {
    const line = this.plan.lines[this.selected];
    const legs = line ? legsOf(line.waypoints) : [];
    const total = legs.reduce((s, l) => s + l.lengthKm, 0);
    $("plan-line-legs").replaceChildren(
      ...legs.map((l) => el("li", {}, `${l.from + 1}→${l.to + 1}: ${fmt(l.lengthKm, 1, "km")} (${fmt(l.lengthNmi, 1, "nmi")}), ${fmt(l.azimuthDeg, 1)}°`)),
      ...(legs.length > 1 ? [el("li", {}, `Line: ${fmt(total, 1, "km")} (${fmt((total * 1000) / 1852, 1, "nmi")})`)] : []),
    );
  }

  // ---- stored plans ------------------------------------------------------------

  async list() {
    let body;
    try {
      body = await request("/api/plans", { what: "Listing stored plans" });
    } catch (err) {
      if (err instanceof ApiError && (err.status === 404 || err.status === 405)) {
        $("plan-status").textContent = "This service does not store plans (no /api/plans).";
        return;
      }
      throw err;
    }
    if (!body || typeof body !== "object" || !Array.isArray(body.plans)) {
      $("plan-status").textContent = "This service does not store plans (no plan list at /api/plans).";
      return;
    }
    this.stored = body.plans;
    const sel = $("plan-stored");
    sel.replaceChildren(...this.stored.map((p) => new Option(`${p.name || p.id} (v${p.version ?? "?"})`, p.id)));
    if (!this.stored.length) sel.add(new Option("(no stored plans)", ""));
    $("plan-open").disabled = !this.stored.length;
    $("plans").dataset.stored = String(this.stored.length);
  }

  async openStored(id) {
    if (!id) return;
    const res = await request(`/api/plans/${encodeURIComponent(id)}`, { what: `Opening plan ${id}`, raw: true });
    const p = await res.json();
    const plan = planFromBody(p);
    const etag = res.headers.get("ETag");
    if (etag) plan.etag = etag;
    this.open(plan);
    const b = this.planMap.bounds();
    if (b) this.map.fitBounds(b, { padding: [40, 40], animate: false });
  }

  open(plan) {
    this.plan = plan;
    // A stored plan names its dataset: show it on the map when the page offers it.
    const ds = plan.settings?.dataset;
    const sel = $("dataset-select");
    if (ds && ds !== state.datasetId && [...sel.options].some((o) => o.value === ds)) {
      sel.value = ds;
      sel.dispatchEvent(new Event("change"));
    }
    this.selected = plan.lines.length ? 0 : -1;
    this.fillSettings(plan.settings);
    this.planMap.setLines(plan.lines, this.selected);
    this.closeCheck();
    this.renderLines();
    $("plan-status").textContent = plan.id ? `Opened ${plan.name || plan.id} (version ${plan.version}).` : "New plan.";
  }

  body() {
    if (!this.plan.lines.length) throw new Error("The plan has no lines: draw one on the map or type its waypoints.");
    const short = this.plan.lines.findIndex((l) => l.waypoints.length < 2);
    if (short >= 0) throw new Error(`${this.plan.lines[short].name || `Line ${short + 1}`} needs at least two waypoints.`);
    this.plan.name = $("plan-name").value.trim();
    this.plan.settings = this.readSettings();
    return planBody(this.plan);
  }

  async save() {
    const body = this.body();
    if (!body.name) throw new Error("Give the plan a name before saving it.");
    let res;
    if (this.plan.id) {
      res = await request(`/api/plans/${encodeURIComponent(this.plan.id)}`, {
        method: "PUT",
        body,
        write: true,
        raw: true,
        headers: { "If-Match": this.plan.etag || `"${this.plan.version}"` },
        what: `Saving plan ${body.name}`,
      }).catch((err) => {
        if (err instanceof ApiError && err.status === 412) err.message += " Someone else changed this plan since you opened it: open it again to see their version.";
        throw err;
      });
    } else {
      res = await request("/api/plans", { method: "POST", body, write: true, raw: true, what: `Saving plan ${body.name}` });
    }
    const saved = planFromBody(await res.json());
    this.plan.id = saved.id;
    this.plan.version = saved.version;
    this.plan.etag = res.headers.get("ETag") || `"${saved.version}"`;
    this.renderLines();
    $("plan-status").textContent = `Saved ${saved.name} (version ${saved.version}).`;
    document.body.dataset.planSaved = String(Number(document.body.dataset.planSaved || 0) + 1);
    await this.list().catch(() => {});
  }

  /** remove deletes the stored plan (DELETE with If-Match) after asking; the lines stay on the page, unsaved. */
  async remove() {
    if (!this.plan.id) return;
    if (!window.confirm(`Delete the stored plan ${this.plan.name || this.plan.id}? Its lines stay on the page, unsaved.`)) return;
    await request(`/api/plans/${encodeURIComponent(this.plan.id)}`, { method: "DELETE", write: true, headers: { "If-Match": this.plan.etag || `"${this.plan.version}"` }, what: `Deleting plan ${this.plan.name}` });
    $("plan-status").textContent = `Deleted the stored plan ${this.plan.name || this.plan.id}; its lines are still here, unsaved.`;
    this.plan.id = "";
    this.plan.version = 0;
    this.plan.etag = "";
    this.renderLines();
    await this.list().catch(() => {});
  }

  // ---- check -------------------------------------------------------------------

  async post(f) {
    const body = this.body();
    return request(`/api/plans/check?f=${f}`, {
      method: "POST",
      body,
      raw: f !== "json",
      headers: f === "json" ? { Accept: "application/json, application/problem+json" } : {},
      what: f === "json" ? `Checking ${body.name || "the plan"}` : `Writing the ${f.toUpperCase()} of the check`,
    });
  }

  async runCheck() {
    const panel = $("plan-check-panel");
    panel.hidden = false;
    panel.dataset.state = "loading";
    panel.dataset.stale = "false";
    $("plan-check-status").textContent = "Checking the plan…";
    try {
      this.check = await this.post("json");
    } catch (err) {
      panel.dataset.state = "error";
      $("plan-check-status").textContent = err.message;
      throw err;
    } finally {
      this.map.invalidateSize({ animate: false });
    }
    this.colours = seriesColours(await loadColourScales().catch(() => new Map()));
    this.showCheck();
    panel.dataset.state = "done";
  }

  showCheck() {
    const c = this.check;
    $("plan-caution").textContent = c.caution || "Expected depths are model estimates and gridded data, not for navigation.";
    $("plan-notes").replaceChildren(...(c.notes || []).map((n) => el("li", {}, n)));
    const sel = $("plan-check-line");
    sel.replaceChildren(...(c.lines || []).map((l, i) => new Option(l.name || `Line ${i + 1}`, String(i))));
    this.showTotals();
    this.showHazards();
    this.showOnMap();
    this.showCheckLine(0);
    const t = c.totals || {};
    $("plan-check-status").textContent = `${c.plan?.name || "Plan"}: ${(c.lines || []).length} lines, ${fmt(t.length_km, 1, "km")} on line, ${t.hazards ?? (c.hazards || []).length} hazards. Model ${c.plan?.settings?.model || state.model}.`;
  }

  showCheckLine(i) {
    const c = this.check;
    if (!c?.lines?.[i]) return;
    this.checkLine = i;
    $("plan-check-line").value = String(i);
    const prof = lineProfile(c, i);
    this.profile = prof;
    this.chart?.destroy();
    const safety = Number(c.plan?.settings?.safety_depth_m);
    this.chart = drawPlanProfile($("plan-chart"), prof, { safetyDepthM: safety, colours: this.colours, onHover: (k) => this.hover(k) });
    planLegend($("plan-legend"), this.colours, { hasBand: prof.bandLow.some((v) => v !== null), hasSafety: safety > 0 });
    this.showLegs(c.lines[i]);
  }

  showLegs(line) {
    const body = $("plan-legs-table").tBodies[0];
    body.replaceChildren();
    for (const [k, leg] of (line.legs || []).entries()) {
      body.append(
        el(
          "tr",
          {},
          el("td", {}, `${leg.from_name || `WP ${k + 1}`} → ${leg.to_name || `WP ${k + 2}`}`),
          el("td", {}, fmt(leg.length_km, 2)),
          el("td", {}, fmt(leg.length_nmi, 2)),
          el("td", {}, fmt(leg.azimuth_deg, 1)),
          el("td", {}, fmtDuration(leg.time_h)),
          el("td", {}, fmt(leg.min_depth_m, 0)),
          el("td", {}, fmt(leg.mean_depth_m, 0)),
          el("td", {}, fmt(leg.max_depth_m, 0)),
        ),
      );
    }
    $("plan-line-summary").replaceChildren(
      ...[
        ["Line length", `${fmt(line.length_km, 2, "km")} (${fmt(line.length_nmi, 2, "nmi")})`],
        ["Time on line", fmtDuration(line.time_on_line_h)],
        ["Depth min / mean / max", `${fmt(line.min_depth_m, 0)} / ${fmt(line.mean_depth_m, 0)} / ${fmt(line.max_depth_m, 0)} m`],
        ["Swath at the shallowest depth", fmt(line.min_swath_width_m, 0, "m")],
        ["Line spacing for the wanted overlap", fmt(line.line_spacing_m, 0, "m")],
        ["Area covered", fmt(line.area_covered_km2, 1, "km²")],
      ].map(([k, v]) => el("div", {}, el("dt", {}, k), el("dd", {}, v))),
    );
  }

  showTotals() {
    const t = this.check.totals || {};
    const rows = [
      ["Length on line", `${fmt(t.length_km, 1, "km")} (${fmt(t.length_nmi, 1, "nmi")})`, "length"],
      ["Transit", `${fmt(t.transit_km, 1, "km")} (${fmt(t.transit_nmi, 1, "nmi")})`, "transit"],
      ["Time on line", fmtDuration(t.time_on_line_h), "time_on_line"],
      ["Time in transit", fmtDuration(t.time_in_transit_h), "time_in_transit"],
      ["Total time", fmtDuration(t.time_total_h), "time_total"],
      ["Expected depth min / mean / max", `${fmt(t.min_depth_m, 0)} / ${fmt(t.mean_depth_m, 0)} / ${fmt(t.max_depth_m, 0)} m`, "depth"],
      ["Area covered", fmt(t.area_covered_km2, 1, "km²"), "area"],
      ["Coverage gaps between lines", String((this.check.coverage_gaps || []).length), "gaps"],
    ];
    $("plan-totals").replaceChildren(...rows.map(([k, v, key]) => el("tr", { dataset: { total: key } }, el("th", {}, k), el("td", {}, v))));
  }

  showHazards() {
    const list = $("plan-hazards");
    list.replaceChildren();
    const hz = this.check.hazards || [];
    for (const h of hz) {
      const li = el("li", { dataset: { kind: h.kind, line: String(h.line) } }, `${h.line_name || `Line ${h.line + 1}`}, ${fmt(h.distance_km, 1, "km")}: ${h.reason || HAZARD_LABELS[h.kind] || h.kind} (${fmtLatLon(h.lat, h.lon)})`);
      li.addEventListener("click", () => {
        this.showCheckLine(h.line);
        this.map.setView([h.lat, h.lon], Math.max(this.map.getZoom(), 7), { animate: false });
      });
      list.append(li);
    }
    if (!hz.length) list.append(el("li", { className: "empty" }, "No hazards found on these lines with these settings."));
    $("plan-check-panel").dataset.hazards = String(hz.length);
  }

  /** showOnMap draws the sampled lines of the check and its hazards. */
  showOnMap() {
    this.checkLayer.clearLayers();
    for (const line of this.check.lines || []) {
      const s = line.samples || {};
      const pos = (s.lon || []).map((lon, k) => [lon, s.lat[k]]);
      for (const part of splitAtAntimeridian(pos)) L.polyline(part, { color: "#ffffff", weight: 1, opacity: 0.9, dashArray: "2 4", smoothFactor: 0, interactive: false, className: "plan-sampled" }).addTo(this.checkLayer);
    }
    for (const gp of this.check.coverage_gaps || []) {
      const m = L.circleMarker([gp.lat, gp.lon], { radius: 5, color: "#000", weight: 1, dashArray: "2 2", fillColor: "#ffffff", fillOpacity: 0.9, className: "plan-gap" });
      m.bindTooltip(`Coverage gap of ${fmt(gp.gap_m, 0, "m")}${Number.isFinite(gp.length_km) ? ` over ${fmt(gp.length_km, 1, "km")}` : ""} between lines ${gp.line_a + 1} and ${gp.line_b + 1} (${fmt(gp.separation_m, 0, "m")} apart here)`, { direction: "top" });
      m.addTo(this.checkLayer);
    }
    const colour = this.colours?.hazard || "#e07a40";
    for (const h of this.check.hazards || []) {
      const m = L.circleMarker([h.lat, h.lon], { radius: 6, color: "#000", weight: 1.5, fillColor: colour, fillOpacity: 0.95, className: "plan-hazard" });
      m.bindTooltip(`${HAZARD_LABELS[h.kind] || h.kind}: ${h.reason || ""}`, { direction: "top" });
      m.addTo(this.checkLayer);
    }
  }

  hover(k) {
    const p = this.profile;
    if (k === null || !p || !p.positions[k]) return;
    const [lon, lat] = p.positions[k];
    if (lon === null || lat === null) return;
    this.hoverMarker.setLatLng([lat, lon]).addTo(this.map);
    const out = $("plan-readout");
    out.dataset.index = String(k);
    out.dataset.markerLon = String(lon);
    out.dataset.markerLat = String(lat);
    const set = (key, text) => (out.querySelector(`[data-key="${key}"]`).textContent = text);
    set("distance", `${fmt(p.distanceKm[k], 2, "km")} (${fmt(p.distanceNmi[k], 2, "nmi")})`);
    set("position", fmtLatLon(lat, lon));
    set("time", fmtDuration(p.timeH[k]));
    set("depth", p.expected[k] === null ? "no data" : `${fmt(p.expected[k], 0, "m")}${p.uncertainty[k] !== null ? ` ± ${fmt(p.uncertainty[k], 0, "m")}` : ""}`);
    set("source", p.source[k] || "none");
    set("swath", fmt(p.swathM[k], 0, "m"));
    set("sound", fmt(p.soundSpeed[k], 1, "m/s"));
    set("soundings", fmt(p.soundingSpacingM[k], 1, "m"));
  }

  async download(f) {
    const res = await this.post(f);
    const blob = await res.blob();
    const name = `${(this.plan.name || "plan").replace(/[^\w.-]+/g, "-")}-check.${f}`;
    const a = el("a", { href: URL.createObjectURL(blob), download: name });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 10000);
    document.body.dataset.planDownload = `${f}:${blob.size}`;
  }

  closeCheck() {
    this.check = null;
    this.chart?.destroy();
    this.chart = null;
    this.checkLayer.clearLayers();
    this.hoverMarker.remove();
    $("plan-check-panel").hidden = true;
    this.map.invalidateSize({ animate: false });
  }
}
