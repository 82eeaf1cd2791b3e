// Compare jobs: their force histories overlaid on one chart and their summaries side by side.

import {api} from "./api.js";
import {LineChart, PALETTE} from "./chart.js";
import {picked, savePicked} from "./queue.js";
import {caution, jobTitle, loadForces, stateBadge, summaryRows} from "./results.js";
import {fill, h, shortId} from "./util.js";

export class CompareView {
  constructor(root) {
    this.root = root;
  }

  async show(ids) {
    ids = [...new Set(ids.filter(Boolean))];
    this.picker = h("section", {class: "card", "aria-labelledby": "pick-heading"});
    this.body = h("div", {class: "compare-body"});
    fill(this.root, h("div", {class: "view-head"}, h("h2", {}, "Compare jobs")), this.picker, this.body);
    this.renderPicker(ids);
    if (ids.length < 2) {
      fill(this.body, h("p", {class: "hint"}, "Pick two or more jobs above (or tick them in the queue) to compare them."));
      return;
    }
    fill(this.body, h("p", {class: "hint"}, "Loading…"));
    const loaded = await Promise.all(ids.map(async (id) => {
      try {
        const job = await api.getJob(id);
        let forces = null;
        try {
          forces = await loadForces(id);
        } catch {
          /* no forces.csv (yet) */
        }
        return {job, forces};
      } catch (err) {
        return {job: {id, state: "missing", error: err.message}, forces: null};
      }
    }));
    this.render(loaded);
  }

  async renderPicker(ids) {
    fill(this.picker, h("h3", {id: "pick-heading"}, "Jobs to compare"), h("p", {class: "hint"}, "Loading recent succeeded jobs…"));
    let jobs = [];
    try {
      jobs = (await api.listJobs({state: "succeeded", limit: 50})).items;
    } catch (err) {
      fill(this.picker, h("h3", {id: "pick-heading"}, "Jobs to compare"), h("p", {class: "message"}, err.message));
      return;
    }
    const chosen = new Set(ids);
    const list = h("ul", {class: "pick-list"}, jobs.map((j) => h("li", {},
      h("input", {type: "checkbox", id: `cmp-${j.id}`, value: j.id, checked: chosen.has(j.id)}),
      h("label", {for: `cmp-${j.id}`}, jobTitle(j), " ", h("small", {}, `${shortId(j.id)} · ${j.owner ?? ""}`)))));
    const apply = h("button", {type: "button", class: "btn btn-primary", id: "compare-apply", onclick: () => {
      const sel = [...list.querySelectorAll("input:checked")].map((i) => i.value);
      const others = ids.filter((id) => !jobs.some((j) => j.id === id));
      const all = [...others, ...sel];
      picked.clear();
      all.forEach((id) => picked.add(id));
      savePicked();
      location.hash = `#/compare?ids=${all.join(",")}`;
    }}, "Compare these");
    fill(this.picker, h("h3", {id: "pick-heading"}, "Jobs to compare"),
      jobs.length ? h("details", {open: ids.length < 2}, h("summary", {}, `Recent succeeded jobs (${jobs.length})`), list, apply)
        : h("p", {class: "hint"}, "No succeeded jobs yet."));
  }

  render(loaded) {
    const parts = [caution(loaded.find((x) => x.job.caution)?.job.caution)];
    const withForces = loaded.filter((x) => x.forces && x.forces.time.length > 1);
    let host = null;
    if (withForces.length) {
      host = h("div", {class: "chart-host", id: "compare-chart"});
      parts.push(h("section", {class: "card chart-card", "aria-labelledby": "overlay-heading"},
        h("h3", {id: "overlay-heading"}, "Force coefficients over time"),
        h("p", {class: "hint"}, "One colour per body of each job; solid lines drag (cD), dashed lines lift (cL)."), host));
    } else {
      parts.push(h("p", {class: "hint"}, "None of these jobs has a force history over time (steady runs have one value)."));
    }
    const colours = new Map(); // one colour per (job, body): cD and cL of a body share it, so do the table's swatches
    for (const {job, forces} of withForces) {
      for (const c of forces.columns.filter((col) => col.quantity === "cd")) {
        colours.set(`${job.id}:${c.owner}`, PALETTE[colours.size % PALETTE.length]);
      }
    }
    parts.push(specDifferences(loaded), this.table(loaded, colours));
    fill(this.body, parts);
    if (!host) return;
    const chart = new LineChart(host, {label: "Drag and lift coefficients of the compared jobs", yLabel: "cD, cL"});
    const series = [];
    for (const {job, forces} of withForces) {
      for (const c of forces.columns.filter((col) => col.quantity === "cd" || col.quantity === "cl")) {
        series.push({id: `${job.id}:${c.key}`, label: `${jobTitle(job)} (${shortId(job.id)}) · ${c.label}`, x: forces.time,
          y: c.values, color: colours.get(`${job.id}:${c.owner}`), dash: c.quantity === "cl" ? "6 4" : ""});
      }
    }
    chart.setSeries(series);
    this.chart = chart;
  }

  table(loaded, colours) {
    const rowsOf = loaded.map(({job}) => new Map(summaryRows(job).map(([k, v]) => [k, v])));
    const labels = [];
    for (const rows of rowsOf) for (const k of rows.keys()) if (!labels.includes(k)) labels.push(k);
    return h("section", {class: "card", "aria-labelledby": "side-heading"},
      h("h3", {id: "side-heading"}, "Summaries side by side"),
      h("div", {class: "table-wrap"}, h("table", {class: "compare-table", id: "compare-table"},
        h("thead", {}, h("tr", {}, h("th", {scope: "col"}, "Quantity"), loaded.map(({job}) => h("th", {scope: "col", dataset: {id: job.id}},
          [...colours].filter(([owner]) => owner.startsWith(`${job.id}:`)).map(([owner, colour]) => h("span",
            {class: "swatch", style: `background:${colour}`, title: owner.slice(job.id.length + 1)})),
          h("a", {href: `#/jobs/${job.id}`}, jobTitle(job)), " ", stateBadge(job.state))))),
        h("tbody", {}, labels.map((k) => h("tr", {}, h("th", {scope: "row"}, k), rowsOf.map((rows) => h("td", {}, rows.get(k) ?? "—"))))))));
  }
}

/** Spec fields as dotted paths (bodies.0.radius) with their values; lists of numbers stay whole (a centre). */
function flatten(value, path = "", out = new Map()) {
  if (Array.isArray(value) && value.every((v) => typeof v !== "object" || v === null)) out.set(path, JSON.stringify(value));
  else if (value && typeof value === "object") {
    for (const [k, v] of Object.entries(value)) flatten(v, path ? `${path}.${k}` : k, out);
  } else out.set(path, JSON.stringify(value ?? null));
  return out;
}

/** A table of the spec fields whose values differ between the jobs (a field one job lacks shows as —). */
function specDifferences(loaded) {
  const flat = loaded.map(({job}) => flatten(job.spec ?? {}));
  const paths = [...new Set(flat.flatMap((f) => [...f.keys()]))].filter((p) => p !== "title").sort();
  const differ = paths.filter((p) => new Set(flat.map((f) => f.get(p) ?? "")).size > 1);
  const head = h("h3", {id: "diff-heading"}, "How the cases differ");
  if (!differ.length) {
    return h("section", {class: "card", "aria-labelledby": "diff-heading"}, head,
      h("p", {class: "hint", id: "spec-same"}, "The cases are the same apart from their titles."));
  }
  return h("section", {class: "card", "aria-labelledby": "diff-heading"}, head,
    h("div", {class: "table-wrap"}, h("table", {class: "compare-table", id: "spec-diff"},
      h("thead", {}, h("tr", {}, h("th", {scope: "col"}, "Spec field"),
        loaded.map(({job}) => h("th", {scope: "col", title: jobTitle(job)}, `${jobTitle(job)} (${shortId(job.id)})`)))),
      h("tbody", {}, differ.map((p) => h("tr", {dataset: {field: p}}, h("th", {scope: "row"}, h("code", {}, p)),
        flat.map((f) => h("td", {}, f.has(p) ? f.get(p).replace(/^"|"$/g, "") : "—"))))))));
}
