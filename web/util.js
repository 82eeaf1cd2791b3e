// Small helpers shared by the page's modules: DOM building without innerHTML, formatting, CSV.

/** Build an element: h("button", {class: "x", onclick: fn}, "label", child, ...). */
export function h(tag, attrs = {}, ...children) {
  const svg = tag.startsWith("svg:");
  const el = svg ? document.createElementNS("http://www.w3.org/2000/svg", tag.slice(4)) : document.createElement(tag);
  for (const [key, value] of Object.entries(attrs || {})) {
    if (value === undefined || value === null || value === false) continue;
    if (key.startsWith("on") && typeof value === "function") el.addEventListener(key.slice(2), value);
    else if (key === "dataset") Object.assign(el.dataset, value);
    else if (key === "text") el.textContent = value;
    else if (!svg && key in el && typeof value !== "string") el[key] = value;
    else el.setAttribute(key, value === true ? "" : String(value));
  }
  append(el, children);
  return el;
}

export const s = (tag, attrs, ...children) => h(`svg:${tag}`, attrs, ...children);

function append(el, children) {
  for (const child of children.flat(Infinity)) {
    if (child === null || child === undefined || child === false) continue;
    el.append(child instanceof Node ? child : String(child));
  }
}

/** Replace the children of an element. */
export function fill(el, ...children) {
  el.replaceChildren();
  append(el, children);
  return el;
}

/** Number with a sensible count of significant digits ("—" for missing). */
export function num(value, digits = 4) {
  if (value === null || value === undefined || Number.isNaN(value)) return "—";
  if (typeof value !== "number") return String(value);
  if (value === 0) return "0";
  const a = Math.abs(value);
  if (a >= 1e6 || a < 1e-3) return value.toExponential(Math.max(digits - 1, 1)).replace("e+", "e");
  return String(Number(value.toPrecision(digits)));
}

export function integer(value) {
  return value === null || value === undefined ? "—" : Math.round(value).toLocaleString("en");
}

/** Seconds as "42 s", "3 min 5 s", "2 h 10 min". */
export function duration(seconds) {
  if (seconds === null || seconds === undefined || !Number.isFinite(seconds)) return "—";
  if (seconds < 1) return `${seconds.toFixed(1)} s`;
  if (seconds < 60) return `${Math.round(seconds)} s`;
  if (seconds < 3600) return `${Math.floor(seconds / 60)} min ${Math.round(seconds % 60)} s`;
  return `${Math.floor(seconds / 3600)} h ${Math.round((seconds % 3600) / 60)} min`;
}

/** A timestamp from the API as local date and time; the full ISO text goes into the title. */
export function when(iso) {
  if (!iso) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return String(iso);
  const today = new Date();
  const sameDay = d.toDateString() === today.toDateString();
  const time = d.toLocaleTimeString([], {hour: "2-digit", minute: "2-digit", second: "2-digit"});
  return sameDay ? time : `${d.toLocaleDateString([], {month: "short", day: "numeric"})} ${time}`;
}

export function secondsBetween(a, b) {
  if (!a) return null;
  const end = b ? new Date(b) : new Date();
  return (end - new Date(a)) / 1000;
}

/** Parse a numeric CSV with one header line (the solver's forces.csv). */
export function parseCsv(text) {
  const lines = text.split(/\r?\n/).filter((line) => line.trim() !== "");
  if (!lines.length) return {columns: [], rows: []};
  const columns = lines[0].split(",").map((c) => c.trim());
  const rows = lines.slice(1).map((line) => line.split(",").map(Number));
  return {columns, rows};
}

/** Get a nested value by dotted path ("bodies.0.radius"). */
export function getPath(obj, path) {
  return path.split(".").reduce((o, k) => (o === undefined || o === null ? undefined : o[k]), obj);
}

/** Set a nested value by dotted path, creating objects/arrays; undefined deletes the key. */
export function setPath(obj, path, value) {
  const keys = path.split(".");
  let o = obj;
  keys.slice(0, -1).forEach((k, i) => {
    if (o[k] === undefined || o[k] === null || typeof o[k] !== "object") o[k] = /^\d+$/.test(keys[i + 1]) ? [] : {};
    o = o[k];
  });
  const last = keys[keys.length - 1];
  if (value === undefined) {
    if (Array.isArray(o)) o[last] = undefined;
    else delete o[last];
  } else o[last] = value;
}

/** Remove empty objects left behind by deletions (keeps arrays and their positions). */
export function prune(value) {
  if (Array.isArray(value)) return value.map(prune);
  if (value && typeof value === "object") {
    const out = {};
    for (const [k, v] of Object.entries(value)) {
      const p = prune(v);
      if (p === undefined) continue;
      if (p && typeof p === "object" && !Array.isArray(p) && !Object.keys(p).length && k !== "reference") continue;
      out[k] = p;
    }
    return out;
  }
  return value;
}

export function shortId(id) {
  return String(id).slice(0, 8);
}

/** Announce a message to screen readers and show it briefly. */
export function toast(message, kind = "info") {
  const box = document.getElementById("toast");
  if (!box) return;
  const item = h("div", {class: `toast toast-${kind}`, role: kind === "error" ? "alert" : "status"}, message);
  box.append(item);
  setTimeout(() => item.remove(), kind === "error" ? 8000 : 4000);
}

/** Ask before cancelling: a running job stops at its next step (what it wrote so far stays), a queued one never runs. */
export function confirmCancel(title, state) {
  const what = state === "running"
    ? `Stop “${title}”? It stops at its next step; the results written so far are kept.`
    : `Cancel “${title}”? It will not run.`;
  return window.confirm(what);
}
