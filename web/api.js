// The service's REST API (issue 3's contract) with the optional bearer token kept in localStorage.

const PREFIX = "/api/v1";
const TOKEN_KEY = "wakeyard.token";

export function getToken() {
  try {
    return localStorage.getItem(TOKEN_KEY) || "";
  } catch {
    return "";
  }
}

export function setToken(token) {
  try {
    if (token) localStorage.setItem(TOKEN_KEY, token);
    else localStorage.removeItem(TOKEN_KEY);
  } catch {
    /* storage disabled: the token lasts for this page only */
  }
}

export class ApiError extends Error {
  /** problems: [{field, message}] for a rejected spec, else one entry with field "". */
  constructor(status, message, problems = []) {
    super(message);
    this.status = status;
    this.problems = problems;
  }
}

function headers(extra = {}) {
  const token = getToken();
  return token ? {...extra, Authorization: `Bearer ${token}`} : extra;
}

/** Turn any error body the API may send into [{field, message}]. */
export function problemsOf(body) {
  const list = Array.isArray(body) ? body : Array.isArray(body?.detail) ? body.detail
    : Array.isArray(body?.errors) ? body.errors : Array.isArray(body?.problems) ? body.problems : null;
  if (list) {
    return list.map((p) => {
      if (Array.isArray(p)) return {field: String(p[0] ?? ""), message: String(p[1] ?? "")};
      let field = p.field ?? p.path ?? p.loc ?? "";
      if (Array.isArray(field)) field = field.filter((x) => x !== "body").join(".");
      return {field: String(field), message: String(p.message ?? p.msg ?? JSON.stringify(p))};
    });
  }
  const text = typeof body === "string" ? body : body?.detail ?? body?.message ?? body?.error;
  return [{field: "", message: typeof text === "string" ? text : JSON.stringify(text ?? body)}];
}

async function request(method, path, {body, query, raw = false, signal} = {}) {
  let url = `${PREFIX}${path}`;
  if (query) {
    const params = new URLSearchParams();
    for (const [k, v] of Object.entries(query)) {
      if (v === undefined || v === null || v === "") continue;
      for (const item of Array.isArray(v) ? v : [v]) params.append(k, item);
    }
    const qs = params.toString();
    if (qs) url += `?${qs}`;
  }
  const init = {method, headers: headers(body !== undefined ? {"Content-Type": "application/json"} : {}), signal};
  if (body !== undefined) init.body = JSON.stringify(body);
  let response;
  try {
    response = await fetch(url, init);
  } catch (err) {
    if (err.name === "AbortError") throw err;
    throw new ApiError(0, "The service does not answer. Is it running?");
  }
  if (!response.ok) {
    let data = null;
    try {
      data = await response.clone().json();
    } catch {
      data = await response.text().catch(() => "");
    }
    const problems = problemsOf(data);
    // every refusal names its field; a rejected spec's fields are worth showing, a 404's "job_id" is not
    const named = response.status === 422;
    let message = problems.map((p) => (named && p.field ? `${p.field}: ${p.message}` : p.message)).join("; ");
    if (response.status === 401) {
      message = getToken() ? `The service did not accept the saved token (${message}). Check it in the Token box at the top.`
        : "The service wants a token: enter yours in the Token box at the top.";
    }
    if (response.status === 403 && !message) message = "Only the job's owner or an admin may do that.";
    throw new ApiError(response.status, message || `${response.status} ${response.statusText}`, problems);
  }
  if (raw) return response;
  if (response.status === 204) return null;
  const type = response.headers.get("content-type") || "";
  return type.includes("json") ? response.json() : response.text();
}

/** A list response as {items, next}; accepts a bare array or common envelope names. */
function listOf(data) {
  if (Array.isArray(data)) return {items: data, next: null, total: data.length};
  const items = data?.items ?? data?.jobs ?? data?.results ?? data?.files ?? [];
  return {items, next: data?.next_cursor ?? data?.cursor ?? data?.next ?? null, total: data?.total ?? null};
}

export const api = {
  /** The health report; a degraded service answers 503 with the same body: a report, not a failure. */
  health: async () => {
    const response = await fetch(`${PREFIX}/health`, {headers: headers()});
    if (response.status !== 200 && response.status !== 503) {
      throw new ApiError(response.status, `${response.status} ${response.statusText}`);
    }
    return response.json();
  },
  caution: () => request("GET", "/caution"),
  examples: () => request("GET", "/examples"),
  listJobs: async (query, signal) => listOf(await request("GET", "/jobs", {query, signal})),
  getJob: (id, signal) => request("GET", `/jobs/${encodeURIComponent(id)}`, {signal}),
  preview: (spec, signal) => request("POST", "/previews", {body: spec, signal}),
  createJob: (spec, tags) => request("POST", "/jobs", {body: spec, query: tags?.length ? {tags} : undefined}),
  cancelJob: (id) => request("POST", `/jobs/${encodeURIComponent(id)}/cancel`),
  deleteJob: (id) => request("DELETE", `/jobs/${encodeURIComponent(id)}`),
  cloneJob: (id, edits) => request("POST", `/jobs/${encodeURIComponent(id)}/clone`, {body: edits}),
  listFiles: async (id) => {
    const {items} = listOf(await request("GET", `/jobs/${encodeURIComponent(id)}/files`));
    // entries may be plain paths or objects describing one file
    return items.map((f) => (typeof f === "string" ? {path: f} : {...f, path: f.path ?? f.name}));
  },
  fileUrl: (id, path) => `${PREFIX}/jobs/${encodeURIComponent(id)}/files/${path.split("/").map(encodeURIComponent).join("/")}`,
  fileText: (id, path) => request("GET", `/jobs/${encodeURIComponent(id)}/files/${path}`, {raw: true}).then((r) => r.text()),
  /** The part of a result file from byte ``offset`` on: {status: 206 (that part), 200 (whole file), 416, 404, text}. */
  fileFrom: async (id, path, offset) => {
    const response = await fetch(`${PREFIX}/jobs/${encodeURIComponent(id)}/files/${path}`,
      {headers: headers({Range: `bytes=${offset}-`}), cache: "no-store"});
    return {status: response.status, text: response.ok ? await response.text() : ""};
  },
  spectrum: (id) => request("GET", `/jobs/${encodeURIComponent(id)}/spectrum`),
  fileBlob: (id, path) => request("GET", `/jobs/${encodeURIComponent(id)}/files/${path}`, {raw: true}).then((r) => r.blob()),
  me: () => request("GET", "/me"),
  listStudies: () => request("GET", "/studies"),
  previewStudy: (study, signal) => request("POST", "/studies/previews", {body: study, signal}),
  createStudy: (study) => request("POST", "/studies", {body: study}),
  getStudy: (id, signal) => request("GET", `/studies/${encodeURIComponent(id)}`, {signal}),
  cancelStudy: (id) => request("POST", `/studies/${encodeURIComponent(id)}/cancel`),
  studyBlob: (id, path, query) => request("GET", `/studies/${encodeURIComponent(id)}/${path}`, {raw: true, query})
    .then((r) => r.blob()),
};

/** States in which a job may still change (worth polling). */
export const ACTIVE = new Set(["queued", "running"]);
export const STATES = ["queued", "running", "succeeded", "failed", "cancelled"];
