// jobs.js: grid uploads, import progress and datasets. A grid file is sent to
// POST /api/grids (multipart: kind, units, vertical, name, variable, file);
// the service answers with an import job, polled at GET /api/jobs/{id} until
// it succeeds or fails. Stored grids can then be combined into a dataset
// (POST /api/datasets). The form's choices (kinds, units) come from the
// service's OpenAPI document when it lists them; otherwise the fields are free
// text and the service's answer (problem details) says what is wrong.

import { request, openapiDocument } from "./api.js";
import * as messages from "./messages.js";

const $ = (id) => document.getElementById(id);
const POLL_MS = 1000;

/** jobIdFrom finds the job id in an upload answer (body or Location header). */
export function jobIdFrom(body, location) {
  const id = body?.job?.id ?? body?.job_id ?? body?.jobId ?? (body?.kind || body?.state ? body?.id : undefined);
  if (id !== undefined && id !== null) return String(id);
  const m = /\/jobs\/([^/?#]+)/.exec(location || "");
  return m ? decodeURIComponent(m[1]) : "";
}

/**
 * uploadFieldsOf reads the multipart form schema of POST /api/grids from the
 * service's OpenAPI document: {name: {enum, description}} per form field.
 */
export function uploadFieldsOf(openapi) {
  const props = openapi?.paths?.["/api/grids"]?.post?.requestBody?.content?.["multipart/form-data"]?.schema?.properties || {};
  const out = {};
  for (const [name, p] of Object.entries(props)) out[name] = { enum: Array.isArray(p?.enum) ? p.enum.map(String) : null, description: p?.description || "" };
  return out;
}

/** progressOf reads a job document into {state, fraction, message, done, failed}. */
export function progressOf(job) {
  const st = String(job?.state ?? job?.status ?? "unknown").toLowerCase();
  let fraction = Number(job?.progress ?? job?.fraction);
  if (fraction > 1) fraction /= 100;
  const done = ["succeeded", "completed", "complete", "success", "done", "finished"].includes(st);
  const failed = ["failed", "error", "discarded", "cancelled", "canceled"].includes(st);
  const errs = Array.isArray(job?.errors) ? job.errors : [];
  return {
    state: st,
    fraction: Number.isFinite(fraction) ? fraction : done ? 1 : NaN,
    message: job?.error || (failed && job?.problem?.detail) || (failed && errs.length ? errs[errs.length - 1] : "") || job?.message || "",
    done,
    failed,
  };
}

export class JobsPanel {
  constructor({ onDatasetCreated = () => {} } = {}) {
    this.onDatasetCreated = onDatasetCreated;
    $("upload-form").addEventListener("submit", (e) => {
      e.preventDefault();
      messages.guard(() => this.upload());
    });
    $("dataset-form").addEventListener("submit", (e) => {
      e.preventDefault();
      messages.guard(() => this.createDataset());
    });
    $("dataset-details").addEventListener("toggle", () => {
      if ($("dataset-details").open) messages.guard(() => this.loadGrids());
    });
    this.formReady = this.loadUploadForm().catch(() => {
      $("upload-kind-hint").textContent = "The service's form description could not be read: type the kind; the service says if it is not one it knows.";
    });
  }

  /**
   * loadUploadForm turns the kind, units and vertical fields into choices
   * when the service's OpenAPI document lists their values, and shows each
   * field's description as its hint.
   */
  async loadUploadForm() {
    const doc = await openapiDocument();
    const fields = uploadFieldsOf(doc);
    const form = $("upload-form");
    for (const name of ["kind", "units", "vertical"]) {
      const f = fields[name];
      const hint = $(`upload-${name}-hint`);
      if (f?.description && hint) hint.textContent = f.description;
      if (!f?.enum?.length) continue;
      const old = form.elements[name];
      const sel = document.createElement("select");
      sel.id = old.id;
      sel.name = name;
      if (old.getAttribute("aria-describedby")) sel.setAttribute("aria-describedby", old.getAttribute("aria-describedby"));
      const labels = new Map(old.tagName === "SELECT" ? [...old.options].map((o) => [o.value, o.textContent]) : []);
      // Units and vertical sense may be left to the file (and the service's detection).
      if (name !== "kind") sel.add(new Option(labels.get("") || "As the file declares", ""));
      for (const v of f.enum) sel.add(new Option(labels.get(v) || v, v));
      old.replaceWith(sel);
    }
    document.body.dataset.uploadForm = "ready";
  }

  async upload() {
    const form = $("upload-form");
    const file = $("upload-file").files[0];
    if (!file) {
      messages.show("Choose a grid file to upload first.", "warning");
      return;
    }
    const fd = new FormData();
    // Text fields first, so the service knows what the file is before it streams it.
    for (const name of ["kind", "units", "vertical", "name", "variable"]) {
      const v = form.elements[name].value.trim();
      if (v) fd.append(name, v);
    }
    fd.append("file", file, file.name);
    const res = await request("/api/grids", { method: "POST", body: fd, write: true, what: `Uploading ${file.name}`, raw: true });
    const body = res.headers.get("Content-Type")?.includes("json") ? await res.json() : null;
    const id = jobIdFrom(body, res.headers.get("Location"));
    form.reset();
    if (!id) {
      messages.show(`${file.name} uploaded.`, "info");
      return;
    }
    this.track(id, file.name);
  }

  /** track adds a progress row for job id and polls it to the end; the grid id comes with the job's result. */
  track(id, label) {
    const li = document.createElement("li");
    li.dataset.jobId = id;
    const name = document.createElement("span");
    name.textContent = `${label} (import job ${id})`;
    const bar = document.createElement("progress");
    bar.max = 1;
    bar.setAttribute("aria-label", `Import progress of ${label}`);
    const st = document.createElement("span");
    st.className = "job-state";
    li.append(name, bar, st);
    $("job-list").prepend(li);
    const poll = async () => {
      let job;
      try {
        job = await request(`/api/jobs/${encodeURIComponent(id)}`, { what: `Checking import job ${id}` });
      } catch (err) {
        st.textContent = err.message;
        li.dataset.state = "error";
        return;
      }
      const p = progressOf(job);
      li.dataset.state = p.state;
      if (Number.isFinite(p.fraction)) bar.value = p.fraction;
      else bar.removeAttribute("value");
      st.textContent = `${p.state}${Number.isFinite(p.fraction) ? ` · ${Math.round(p.fraction * 100)} %` : ""}${p.message ? ` · ${p.message}` : ""}`;
      if (p.done) {
        const r = job?.result ?? {};
        const gridId = r.grid_id ?? "";
        if (gridId) name.textContent = `${label} (import job ${id}, grid ${gridId})`;
        const how = r.created === false ? ` is already stored${gridId ? ` as grid ${gridId}` : ""}` : ` imported${gridId ? ` as grid ${gridId}` : ""}`;
        const notes = Array.isArray(r.notes) && r.notes.length ? ` Note: ${r.notes.join("; ")}.` : "";
        messages.show(`${label}${how}.${notes} Combine grids into a dataset below to map them.`, "info");
        if ($("dataset-details").open) messages.guard(() => this.loadGrids());
      } else if (p.failed) {
        messages.show(`Import of ${label} failed${p.message ? `: ${p.message}` : "."}`, "error");
      } else {
        setTimeout(poll, POLL_MS);
      }
    };
    poll();
  }

  /**
   * loadGrids fills the dataset form's grid choices from GET /api/grids.
   * Every stored grid is offered, with its kind, in every field: which kinds
   * fit which field is the service's rule, and its answer says when a choice
   * does not fit.
   */
  async loadGrids() {
    const body = await request("/api/grids", { what: "Listing stored grids" });
    const grids = body?.grids || [];
    for (const [sel, empty] of [["ds-age", "(choose a grid)"], ["ds-depth", "(none)"], ["ds-sediment", "(none)"]]) {
      const el = $(sel);
      const keep = el.value;
      el.replaceChildren(new Option(empty, ""));
      for (const g of grids) el.add(new Option(`${g.name || g.id} (${g.kind})`, g.id));
      if (grids.some((g) => g.id === keep)) el.value = keep;
    }
  }

  async createDataset() {
    const f = $("dataset-form");
    const body = {};
    for (const name of ["name", "age_grid_id", "depth_grid_id", "sediment_grid_id"]) {
      const v = f.elements[name].value.trim();
      if (v) body[name] = v;
    }
    // The service says what a dataset needs (problem details) if anything is missing.
    const d = await request("/api/datasets", { method: "POST", write: true, body, what: "Creating the dataset" });
    messages.show(`Dataset "${d?.name || body.name}" created.`, "info");
    f.reset();
    this.onDatasetCreated(d?.id);
  }
}
