// Pieces shared by the job and compare views: the caution, summary rows, force series, file downloads.

import {api, getToken} from "./api.js";
import {duration, h, integer, num, parseCsv, toast} from "./util.js";

/** The service's one caution text (sent with every job and study), shown beside results. */
export function caution(text) {
  if (!text) return null;
  return h("aside", {class: "caution", role: "note", "aria-label": "Caution"}, h("strong", {}, "Caution. "), text);
}

/** Is a summary value a statistics object (transient) or a plain number (steady)? */
const stat = (v, key) => (v && typeof v === "object" ? v[key] : key === "mean" ? v : null);

/**
 * Summary rows as [label, value, title?] for one job; also used column-wise by the compare view.
 * Body rows are keyed by body name so jobs with the same bodies line up.
 */
export function summaryRows(job) {
  const s = job.summary;
  if (!s) return [];
  const transient = s.mode === "transient" || (s.bodies?.[0] && typeof s.bodies[0].drag_coefficient === "object");
  const rows = [["Reynolds number", num(s.reynolds_number, 4)]];
  for (const b of s.bodies ?? []) {
    const n = b.name;
    if (transient) {
      rows.push([`${n}: cD mean`, num(stat(b.drag_coefficient, "mean"), 5)]);
      rows.push([`${n}: cD amplitude`, num(stat(b.drag_coefficient, "amplitude"), 4)]);
      rows.push([`${n}: cL mean`, num(stat(b.lift_coefficient, "mean"), 4)]);
      rows.push([`${n}: cL amplitude`, num(stat(b.lift_coefficient, "amplitude"), 4)]);
      rows.push([`${n}: Strouhal number`, num(typeof b.strouhal_number === "object" ? b.strouhal_number?.strouhal_number : b.strouhal_number, 4)]);
      if (b.motion) rows.push(...motionRows(n, b.motion));
    } else {
      rows.push([`${n}: cD`, num(stat(b.drag_coefficient, "mean"), 5)]);
      rows.push([`${n}: cL`, num(stat(b.lift_coefficient, "mean"), 4)]);
      if (b.recirculation_length !== undefined) rows.push([`${n}: recirculation length (m)`, num(b.recirculation_length, 4)]);
    }
  }
  for (const b of s.bodies ?? []) {
    if (b.nusselt_number === undefined) continue;
    if (transient) {
      rows.push([`${b.name}: Nusselt number mean`, num(stat(b.nusselt_number, "mean"), 4)]);
      rows.push([`${b.name}: Nusselt number amplitude`, num(stat(b.nusselt_number, "amplitude"), 4)]);
    } else rows.push([`${b.name}: Nusselt number`, num(stat(b.nusselt_number, "mean"), 4)]);
    rows.push([`${b.name}: mean surface temperature (°C)`, num(b.surface_temperature, 5)]);
  }
  if (s.outlet_temperature !== undefined && s.outlet_temperature !== null) {
    rows.push(["Outlet mixed-mean temperature (°C)", num(stat(s.outlet_temperature, "mean"), 5)]);
  }
  if (transient && s.strouhal_number !== undefined) {
    rows.push(["Strouhal number (case)", num(typeof s.strouhal_number === "object" ? s.strouhal_number?.strouhal_number : s.strouhal_number, 4)]);
  }
  if (s.pressure_drop !== undefined && s.pressure_drop !== null) {
    rows.push(["Pressure drop Δp mean (Pa)", num(stat(s.pressure_drop, "mean"), 5)]);
    if (typeof s.pressure_drop === "object") rows.push(["Pressure drop Δp amplitude (Pa)", num(s.pressure_drop.amplitude, 4)]);
  }
  for (const [key, reason] of Object.entries(s.unavailable ?? {})) {
    rows.push([`${unavailableLabel(key, s.bodies)} (not computed)`, reason]);
  }
  rows.push(["Mesh cells", integer(s.mesh?.cells)]);
  rows.push(["Unknowns (DoFs)", integer(s.mesh?.dofs)]);
  if (transient) {
    if (s.steps !== undefined) rows.push(["Time steps", integer(s.steps)]);
    const ts = s.time_steps;
    if (ts?.accepted) {
      rows.push(["Step size Δt (s)", `${num(ts.smallest, 3)} to ${num(ts.largest, 3)}, mean ${num(ts.mean, 3)}`]);
      if (ts.rejected) rows.push(["Steps retried smaller", integer(ts.rejected)]);
    }
    if (s.simulated_time !== undefined) rows.push(["Simulated time (s)", num(s.simulated_time, 5)]);
    if (s.max_cfl !== undefined) rows.push(["Largest CFL number", num(s.max_cfl, 3)]);
    if (s.ended_by) rows.push(["Stopped because", s.ended_by === "periodic" ? "the lift became periodic" : s.ended_by === "end_time" ? "end time reached" : s.ended_by]);
  } else if (s.newton) rows.push(["Newton iterations", integer(s.newton.iterations)]);
  rows.push(["Run time", duration(s.wall_time_seconds)]);
  return rows;
}

/** A moving body's response (summary.json's motion block): swing per axis it moved along, and frequencies. */
function motionRows(n, motion) {
  const rows = [];
  for (const axis of ["x", "y"]) {
    const m = motion[axis];
    if (!m || m.amplitude === 0) continue;
    rows.push([`${n}: amplitude along ${axis} (m)`, num(m.amplitude, 4)]);
    rows.push([`${n}: amplitude ratio A/L along ${axis}`, num(m.amplitude_ratio, 4)]);
    if (Math.abs(m.mean) > 1e-3 * m.amplitude) rows.push([`${n}: mean displacement along ${axis} (m)`, num(m.mean, 4)]);
  }
  rows.push([`${n}: response frequency (Hz)`, num(motion.frequency, 4)]);
  rows.push([`${n}: frequency ratio`, num(motion.frequency_ratio, 4),
    "response over driving frequency (driven) or over natural frequency in vacuum (spring-mounted)"]);
  return rows;
}

/** A summary path such as "bodies.0.recirculation_length" in words: "upstream: recirculation length". */
function unavailableLabel(key, bodies) {
  const m = /^bodies\.(\d+)\.(.+)$/.exec(key);
  const what = (m ? m[2] : key).replace(/\.(\d+)$/, (_, k) => ` ${Number(k) + 1}`).replaceAll("_", " ");
  return m && bodies?.[Number(m[1])] ? `${bodies[Number(m[1])].name}: ${what}` : what;
}

export function summaryTable(job) {
  const rows = summaryRows(job);
  if (!rows.length) return h("p", {class: "hint"}, "No summary yet.");
  return h("table", {class: "summary-table"},
    h("caption", {class: "visually-hidden"}, "Summary of results"),
    h("tbody", {}, rows.map(([k, v, title]) => h("tr", {}, h("th", {scope: "row", title: title ?? ""}, k), h("td", {}, v)))));
}

const QUANTITY = {cd: "cD", cl: "cL", fx: "Fx (N/m)", fy: "Fy (N/m)", ux: "ux (m/s)", uy: "uy (m/s)", dx: "dx (m)", dy: "dy (m)"};

/** Turn forces.csv into {time, columns: [{key, owner, quantity, label, values}]}. */
export function forceColumns(text) {
  const {columns, rows} = parseCsv(text);
  const t = rows.map((r) => r[0]);
  const out = columns.slice(1).map((name, j) => {
    const m = /^(.*)_(cd|cl|fx|fy|ux|uy|dx|dy)$/.exec(name);
    const owner = m ? m[1] : "";
    const quantity = m ? m[2] : name;
    const label = m ? `${owner} ${QUANTITY[quantity]}` : {pressure_drop: "Δp (Pa)", time_step: "Δt (s)"}[name] ?? name;
    return {key: name, owner, quantity, label, values: rows.map((r) => r[j + 1])};
  });
  return {time: t, columns: out, rows};
}

export async function loadForces(jobId) {
  return forceColumns(await api.fileText(jobId, "forces.csv"));
}

/** A download link that also works when the service wants a token (fetches with the header). */
export function downloadLink(jobId, path, label, extra = {}) {
  const href = api.fileUrl(jobId, path);
  const name = `${jobId.slice(0, 8)}-${path.split("/").pop()}`;
  return h("a", {href, download: name, class: "download", ...extra, onclick: async (e) => {
    if (!getToken()) return;
    e.preventDefault();
    try {
      const blob = await api.fileBlob(jobId, path);
      const url = URL.createObjectURL(blob);
      const a = h("a", {href: url, download: name});
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 2000);
    } catch (err) {
      toast(err.message, "error");
    }
  }}, label);
}

/** Point an <img> at a result file; with a token the picture is fetched with the header. */
export async function showPicture(img, jobId, path) {
  if (!getToken()) {
    img.src = api.fileUrl(jobId, path);
    return;
  }
  const blob = await api.fileBlob(jobId, path);
  const old = img.dataset.objectUrl;
  img.dataset.objectUrl = URL.createObjectURL(blob);
  img.src = img.dataset.objectUrl;
  if (old) URL.revokeObjectURL(old);
}

export function sizeText(bytes) {
  if (bytes === null || bytes === undefined) return "";
  if (bytes < 1024) return `${bytes} B`;
  if (bytes < 1024 ** 2) return `${(bytes / 1024).toFixed(1)} kB`;
  if (bytes < 1024 ** 3) return `${(bytes / 1024 ** 2).toFixed(1)} MB`;
  return `${(bytes / 1024 ** 3).toFixed(1)} GB`;
}

export function stateBadge(state, extra = "") {
  const words = {queued: "queued", running: "running", succeeded: "succeeded", failed: "failed", cancelled: "cancelled"};
  return h("span", {class: `badge state-${state}`, dataset: {state}}, (words[state] ?? state) + extra);
}

export function jobTitle(job) {
  return job.title || job.spec?.title || `Job ${String(job.id).slice(0, 8)}`;
}
