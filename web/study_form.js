// Building a study on the case in the New-case form: a sweep of one or two fields (values, or a linear or geometric
// range) or a mesh-convergence study. The fields offered, the points and their sizes all come from the service
// (the job preview's `sweepable`, POST /api/v1/studies/previews): the page expands nothing itself.

import {api} from "./api.js";
import {readable} from "./form.js";
import {duration, fill, h, integer, num} from "./util.js";

/** "points.1.fluid.viscosity" → "Point 2 › fluid › viscosity"; "vary.0.range.count" → "Field 1 › range › count". */
function studyField(path) {
  const m = /^(points|vary)\.(\d+)\.?(.*)$/.exec(path);
  if (m) return [`${m[1] === "points" ? "Point" : "Field"} ${Number(m[2]) + 1}`, m[3] && readable(m[3])].filter(Boolean).join(" › ");
  if (path.startsWith("base.")) return `Base case › ${readable(path.slice(5))}`;
  return readable(path);
}

const problemText = (err) => (err.problems?.length
  ? err.problems.map((q) => (q.field ? `${studyField(q.field)}: ${q.message}` : q.message)) : [err.message]);

const HOW = [["values", "Values"], ["linear", "Linear range"], ["geometric", "Geometric range"]];

export class StudyBuilder {
  /** baseCase: () => the job spec currently in the New-case form; onQueued(created) after POST /studies. */
  constructor({baseCase, onQueued}) {
    this.baseCase = baseCase;
    this.onQueued = onQueued;
    this.fields = [];
    this.previewed = null; // JSON of the study last previewed without problems
    this.build();
  }

  build() {
    this.baseNote = h("p", {class: "hint", id: "study-base"});
    this.title = h("input", {id: "study-title", type: "text", maxlength: 200, placeholder: "e.g. Pier at three river speeds"});
    this.kind = "sweep";
    const kinds = h("fieldset", {class: "study-kind"}, h("legend", {}, "Kind"),
      ...[["sweep", "Sweep of one or two fields"], ["mesh-convergence", "Mesh convergence"]].map(([value, text]) =>
        h("label", {}, h("input", {type: "radio", name: "study-kind", value, id: `study-kind-${value}`,
          checked: value === "sweep", onchange: () => this.setKind(value)}), ` ${text}`)));
    this.axes = [0, 1].map((i) => this.axis(i));
    this.sweep = h("div", {class: "study-axes"}, ...this.axes.map((a) => a.el));
    this.levels = h("input", {id: "study-levels", type: "number", min: 3, max: 5, step: 1, value: 3});
    this.mesh = h("div", {class: "study-levels", hidden: true},
      h("label", {for: "study-levels"}, "Meshes "), this.levels,
      h("small", {class: "hint"}, " each one splits every cell of the one before into four"));
    this.previewButton = h("button", {type: "button", class: "btn", id: "study-preview",
      onclick: () => this.preview()}, "Preview study");
    this.queueButton = h("button", {type: "button", class: "btn btn-primary", id: "study-queue", disabled: true,
      onclick: () => this.queue()}, "Queue study");
    this.out = h("div", {class: "study-preview", id: "study-preview-out", "aria-live": "polite"});
    this.el = h("details", {class: "card study-builder", open: true},
      h("summary", {}, h("h3", {}, "New study")), this.baseNote,
      h("div", {class: "study-row"}, h("label", {for: "study-title"}, "Title "), this.title),
      kinds, this.sweep, this.mesh,
      h("div", {class: "button-row"}, this.previewButton, this.queueButton), this.out);
    this.el.addEventListener("input", () => this.stale());
    this.el.addEventListener("change", () => this.stale());
  }

  axis(i) {
    const id = (name) => `study-${name}-${i}`;
    const field = h("select", {id: id("field")});
    const how = h("select", {id: id("how"), "aria-label": `How field ${i + 1} varies`},
      ...HOW.map(([v, t]) => h("option", {value: v}, t)));
    const values = h("input", {id: id("values"), type: "text", placeholder: "e.g. 0.1, 0.2, 0.4",
      "aria-label": `Values of field ${i + 1}`});
    const start = h("input", {id: id("start"), type: "text", inputmode: "decimal", "aria-label": `Range start of field ${i + 1}`});
    const stop = h("input", {id: id("stop"), type: "text", inputmode: "decimal", "aria-label": `Range end of field ${i + 1}`});
    const count = h("input", {id: id("count"), type: "number", min: 2, max: 100, value: 3, "aria-label": `Points in field ${i + 1}'s range`});
    const list = h("span", {}, values);
    const range = h("span", {hidden: true}, "from ", start, " to ", stop, " in ", count, " points");
    how.addEventListener("change", () => {
      list.hidden = how.value !== "values";
      range.hidden = how.value === "values";
    });
    const el = h("fieldset", {class: "study-axis"},
      h("legend", {}, i === 0 ? "Field 1" : "Field 2 (optional)"),
      h("label", {for: id("field"), class: "visually-hidden"}, `Field ${i + 1}`), field, " ", how, " ", list, range);
    return {el, field, how, values, start, stop, count, optional: i > 0};
  }

  setKind(kind) {
    this.kind = kind;
    this.sweep.hidden = kind !== "sweep";
    this.mesh.hidden = kind === "sweep";
  }

  /** Ask the service which fields of the current base case a sweep can vary (and whether the case is valid). */
  async refresh() {
    const base = this.baseCase();
    this.stale();
    let p;
    try {
      p = await api.preview(base);
    } catch (err) {
      fill(this.baseNote, `The base case could not be checked: ${err.message}`);
      return;
    }
    const name = base.title || "untitled case";
    fill(this.baseNote, "Built on the case in the ", h("a", {href: "#/new"}, "New case"), ` form: “${name}”`,
      p.problems.length ? ` has ${p.problems.length} problem(s) to fix there first.`
        : `, Reynolds number ${num(p.reynolds, 4)}.`);
    this.fields = p.sweepable ?? [];
    for (const a of this.axes) {
      const keep = a.field.value;
      const options = this.fields.map((f) => h("option", {value: f.path},
        `${readable(f.path)} (now ${f.derived ? "about " : ""}${num(f.value)}${f.unit === "1" ? "" : ` ${f.unit}`}${
          f.derived ? ", derived" : ""})`));
      fill(a.field, a.optional ? h("option", {value: ""}, "— none —") : null, ...options);
      if (this.fields.some((f) => f.path === keep) || (a.optional && keep === "")) a.field.value = keep;
    }
  }

  /** The study document as POST /api/v1/studies takes it, or a list of local problems (unreadable numbers). */
  study() {
    const out = {kind: this.kind, base: this.baseCase()};
    if (this.title.value.trim()) out.title = this.title.value.trim();
    if (this.kind !== "sweep") return {study: {...out, levels: Number(this.levels.value)}, problems: []};
    const problems = [];
    const number = (text, what) => {
      const x = Number(text.trim());
      if (text.trim() === "" || !Number.isFinite(x)) problems.push(`${what}: “${text.trim()}” is not a number`);
      return x;
    };
    out.vary = [];
    this.axes.forEach((a, i) => {
      if (!a.field.value) return;
      const what = `Field ${i + 1}`;
      if (a.how.value === "values") {
        const parts = a.values.value.split(/[\s,;]+/).filter(Boolean);
        if (!parts.length) problems.push(`${what}: give at least one value`);
        out.vary.push({path: a.field.value, values: parts.map((t) => number(t, `${what} values`))});
      } else {
        out.vary.push({path: a.field.value, range: {start: number(a.start.value, `${what} start`),
          stop: number(a.stop.value, `${what} end`), count: Number(a.count.value), spacing: a.how.value}});
      }
    });
    return {study: out, problems};
  }

  /** Queueing needs a preview of exactly this study: any edit here or in the New-case form asks for a new one. */
  stale() {
    const current = this.previewed !== null && this.previewed === JSON.stringify(this.study().study);
    this.queueButton.disabled = !current;
    this.out.classList.toggle("outdated", this.previewed !== null && !current);
  }

  async preview() {
    const {study, problems} = this.study();
    this.previewed = null;
    this.stale();
    if (problems.length) return this.showProblems(problems);
    fill(this.out, h("p", {class: "hint"}, "Asking the service…"));
    try {
      const p = await api.previewStudy(study);
      this.previewed = JSON.stringify(study);
      this.showPreview(p);
    } catch (err) {
      this.showProblems(problemText(err));
    }
    this.stale();
  }

  showProblems(messages) {
    fill(this.out, h("ul", {class: "warnings study-problems"}, ...messages.map((m) => h("li", {}, m))));
  }

  showPreview(p) {
    const paths = Object.keys(p.points[0]?.values ?? {});
    const time = p.total.seconds ? `, roughly ${duration(p.total.seconds)} of running (an estimate)` : "";
    const about = p.points.some((pt) => pt.estimate.steps_method === "estimated") ? "about " : "";
    const steps = p.total.steps !== null ? `, ${about}${integer(p.total.steps)} time steps` : "";
    fill(this.out,
      h("p", {class: "study-total", id: "study-total"}, h("strong", {}, `${integer(p.count)} points`),
        `: ${integer(p.total.cells)} cells and ${integer(p.total.dofs)} unknowns in all${steps}${time}.`),
      h("div", {class: "study-plan-wrap"}, h("table", {class: "table study-plan"},
        h("thead", {}, h("tr", {}, ...[...paths.map(readable), "Reynolds", "Cells", "Unknowns", "Steps"]
          .map((t) => h("th", {scope: "col"}, t)))),
        h("tbody", {}, ...p.points.map((pt) => h("tr", {},
          ...paths.map((k) => h("td", {}, num(pt.values[k]))), h("td", {}, num(pt.reynolds, 4)),
          h("td", {}, integer(pt.estimate.cells)), h("td", {}, integer(pt.estimate.dofs)),
          h("td", {}, pt.estimate.steps === null ? "—" : integer(pt.estimate.steps))))))));
  }

  async queue() {
    const {study} = this.study();
    if (JSON.stringify(study) !== this.previewed) return this.stale();
    this.queueButton.disabled = true;
    try {
      this.onQueued(await api.createStudy(study));
      this.previewed = null;
    } catch (err) {
      this.showProblems(problemText(err));
    }
    this.stale();
  }
}
