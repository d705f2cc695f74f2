// api.js: the only place the page talks to the ridgeflank HTTP API.
// Every failure becomes an ApiError carrying the RFC 9457 problem details
// (title, detail, status, type, code) so the page can show a clear message.

import { getToken, askForToken } from "./token.js";

/** An HTTP or network failure, with the server's problem details when it sent them. */
export class ApiError extends Error {
  constructor(message, { status = 0, type = "", title = "", detail = "", code = "", problem = null } = {}) {
    super(message);
    this.name = "ApiError";
    this.status = status;
    this.type = type;
    this.title = title;
    this.detail = detail;
    this.code = code;
    this.problem = problem;
  }
}

/** Turns a non-2xx response into an ApiError, reading problem+json if present. */
async function errorFrom(res, what) {
  const ctype = res.headers.get("Content-Type") || "";
  let problem = null;
  if (ctype.includes("json")) {
    try {
      problem = await res.json();
    } catch {
      problem = null;
    }
  }
  const title = problem?.title || res.statusText || `HTTP ${res.status}`;
  const detail = problem?.detail || "";
  let text = `${what} failed: ${title}`;
  if (detail && detail !== title) text += `: ${detail}`;
  text += ` (HTTP ${res.status}${problem?.code ? `, ${problem.code}` : ""}).`;
  return new ApiError(text, {
    status: res.status,
    type: problem?.type || "",
    title,
    detail,
    code: problem?.code || "",
    problem,
  });
}

/**
 * request sends one HTTP request. Options: method, body (object → JSON, or
 * FormData/Blob/string as is), headers, write (adds the bearer token and asks
 * for one on 401/403 once), what (a short description for messages), raw (return
 * the Response instead of parsed JSON).
 */
export async function request(path, opts = {}) {
  const { method = "GET", body, headers = {}, write = false, what = `${method} ${path}`, raw = false } = opts;
  const h = new Headers(headers);
  let payload = body;
  if (body !== undefined && body !== null && !(body instanceof FormData) && !(body instanceof Blob) && typeof body !== "string") {
    payload = JSON.stringify(body);
    if (!h.has("Content-Type")) h.set("Content-Type", "application/json");
  }
  if (!h.has("Accept")) h.set("Accept", "application/json, application/geo+json, application/vnd.cov+json, application/problem+json");
  for (let attempt = 0; attempt < 2; attempt++) {
    const token = getToken();
    if (write && token) h.set("Authorization", `Bearer ${token}`);
    let res;
    try {
      res = await fetch(path, { method, body: payload, headers: h });
    } catch (err) {
      throw new ApiError(`${what} failed: the service could not be reached (${err.message}).`);
    }
    if (write && (res.status === 401 || res.status === 403) && attempt === 0) {
      const err = await errorFrom(res, what);
      const fresh = await askForToken(err.message);
      if (fresh) continue; // retry once with the new token
      throw err;
    }
    if (!res.ok) throw await errorFrom(res, what);
    if (raw) return res;
    if (res.status === 204) return null;
    const ctype = res.headers.get("Content-Type") || "";
    if (ctype.includes("json")) return res.json();
    return res.text();
  }
  throw new ApiError(`${what} failed: not authorised.`);
}

/** Builds a query string, skipping undefined/null/empty values. */
export function query(params) {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries(params)) {
    if (v === undefined || v === null || v === "") continue;
    q.set(k, String(v));
  }
  const s = q.toString();
  return s ? `?${s}` : "";
}

let openapi = null;

/** openapiDocument is the service's OpenAPI document, read once (forms and limits come from it). */
export function openapiDocument() {
  openapi ??= request("/api/openapi.json", { what: "Reading the service's description" }).catch((err) => {
    openapi = null; // asked again next time
    throw err;
  });
  return openapi;
}
