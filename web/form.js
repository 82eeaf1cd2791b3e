// The case form: edits one job spec (the same JSON a script would send), draws it to scale,
// shows the Reynolds number, blockage ratio, mesh size, time steps and warnings from the service's preview (the
// solver's own figures, outlines and defaults, POST /api/v1/previews), offers the service's examples
// (GET /api/v1/examples), and puts the service's validation errors beside the fields they name.

import {ApiError, api} from "./api.js";
import {CaseDrawing, translateBody} from "./drawing.js";
import {newBody} from "./new_body.js";
import {duration, fill, getPath, h, integer, num, prune, setPath, toast} from "./util.js";

const SHAPES = [["circle", "Circle"], ["rectangle", "Rectangle"], ["ellipse", "Ellipse"],
  ["naca4", "Airfoil (NACA 4-digit)"], ["polygon", "Polygon"]];

const idOf = (path) => `f-${path.replaceAll(".", "-")}`;
const clone = (x) => JSON.parse(JSON.stringify(x ?? {}));
const isNum = (v) => typeof v === "number" && Number.isFinite(v);

const ADAPTIVE = "bdf2-adaptive"; // the error-controlled scheme's name in the spec
const STARTER = "lab_post"; // the example the form starts from
const PREVIEW_DELAY = 300; // ms of quiet typing before the service is asked for the figures

export class CaseForm {
  constructor(root, {onQueued}) {
    this.root = root;
    this.onQueued = onQueued;
    this.spec = {};
    this.normal = null; // the latest normalised spec from the preview: the service's values for blank fields
    this.normalAsked = {}; // the spec that preview was asked for: where it held a value, normal only echoes it
    this.blank = null; // the normalised blank case: the service's defaults where they depend on nothing else
    this.drawn = null; // {bodies, outlines}: the bodies of the latest preview and the solver's outlines of them
    this.tags = "";
    this.from = null; // job whose spec was loaded for a re-run
    this.localErrors = new Map(); // path -> message (unparseable numbers)
    this.jsonDirty = false;
    this.build();
  }

  // ---------- layout ----------
  build() {
    this.form = h("form", {class: "case-form", novalidate: true, "aria-labelledby": "case-heading",
      oninput: (e) => this.onInput(e), onchange: (e) => this.onInput(e), onsubmit: (e) => this.submit(e)});
    this.summary = h("div", {class: "error-summary", id: "error-summary", tabindex: "-1", hidden: true});
    this.fromNote = h("p", {class: "from-note", hidden: true});
    this.drawingHost = h("div", {class: "drawing-host"});
    this.figures = h("dl", {class: "figures", "aria-live": "polite"});
    this.warnings = h("ul", {class: "warnings", "aria-live": "polite"});
    this.json = h("textarea", {id: "spec-json", class: "json", rows: 18, spellcheck: false, autocomplete: "off",
      "aria-describedby": "json-help json-error json-dirty", oninput: () => {
        this.jsonDirty = true;
        this.jsonDirtyNote.hidden = false;
      }});
    this.jsonDirtyNote = h("p", {id: "json-dirty", class: "hint", hidden: true},
      "This box has edits the form does not have yet: apply them, or ",
      h("button", {type: "button", class: "btn btn-small", onclick: () => {
        this.jsonDirty = false;
        this.jsonDirtyNote.hidden = true;
        this.jsonError.hidden = true;
        this.update();
      }}, "show the form's case again"), ".");
    this.jsonError = h("p", {id: "json-error", class: "field-error", hidden: true});
    this.upload = h("input", {type: "file", accept: ".json,application/json", class: "visually-hidden", id: "spec-upload",
      onchange: (e) => this.uploadFile(e)});
    const exampleSelect = h("select", {id: "example", "aria-label": "Start from an example"},
      h("option", {value: ""}, "Start from an example…"));
    exampleSelect.addEventListener("change", () => {
      const ex = this.examples.find((e) => e.name === exampleSelect.value);
      if (ex) this.load(ex.spec);
      exampleSelect.value = "";
    });
    this.exampleSelect = exampleSelect;
    this.examples = [];
    const side = h("aside", {class: "case-side", "aria-label": "Preview of the case"},
      h("section", {class: "card preview"}, h("h3", {}, "Drawing"), this.drawingHost, this.figures, this.warnings),
      h("section", {class: "card json-card"},
        h("h3", {}, h("label", {for: "spec-json"}, "Case as JSON")),
        h("p", {class: "hint", id: "json-help"}, "The same document a script sends to POST /api/v1/jobs. ",
          "Edit or paste it here, then apply it to the form."),
        this.json, this.jsonError, this.jsonDirtyNote,
        h("div", {class: "button-row"},
          h("button", {type: "button", class: "btn", onclick: () => this.applyJson()}, "Apply JSON to form"),
          h("button", {type: "button", class: "btn", onclick: () => this.copyJson()}, "Copy"),
          h("button", {type: "button", class: "btn", onclick: () => this.pasteJson()}, "Paste"),
          h("label", {class: "btn", for: "spec-upload", tabindex: "0", role: "button",
            onkeydown: (e) => {
              if (e.key === "Enter" || e.key === " ") {
                e.preventDefault();
                this.upload.click();
              }
            }}, "Upload file…"), this.upload,
          h("button", {type: "button", class: "btn", onclick: () => this.downloadJson()}, "Download"))));
    this.fields = h("div", {class: "form-fields"});
    fill(this.root,
      h("div", {class: "view-head"}, h("h2", {id: "case-heading"}, "New case"), exampleSelect),
      this.fromNote, this.summary,
      h("div", {class: "case-layout"}, h("div", {class: "case-main"}, this.form), side));
    this.form.append(this.fields,
      h("div", {class: "submit-row"},
        field("tags", "Tags (optional)", h("input", {id: "f-tags", type: "text", value: this.tags,
          placeholder: "e.g. study-a, mesh-check", oninput: (e) => {
            this.tags = e.target.value;
          }}), {hint: "Comma-separated labels to find the job later."}),
        h("div", {class: "button-row"},
          h("button", {type: "submit", class: "btn btn-primary", id: "submit-case"}, "Queue this case"),
          h("a", {href: "#/studies", class: "btn", id: "study-this-case"}, "Build a study on this case…"))));
    this.drawing = new CaseDrawing(this.drawingHost, {onMove: (i, dx, dy) => this.moveBody(i, dx, dy)});
    this.fields.append(h("p", {class: "hint"}, "Loading the examples…"));
    this.loaded = false; // a case applied (JSON, file, a job to re-run) before the examples arrive is kept
    this.start();
  }

  /** Offer the service's examples and start from one of them. */
  async start() {
    try {
      // the examples, and the service's values for a blank case (what blank fields get before a preview answers)
      const [examples, blank] = await Promise.all([api.examples(), api.preview({})]);
      this.examples = examples.examples;
      this.normal = this.blank = blank.spec;
    } catch (err) {
      toast(`The examples could not be loaded: ${err.message}`, "error");
    }
    this.exampleSelect.append(...this.examples.map((ex) => h("option", {value: ex.name}, ex.title)));
    const first = this.examples.find((ex) => ex.name === STARTER) ?? this.examples[0];
    if (!this.loaded) this.load(first ? first.spec : {});
  }

  /** A field's value: the spec's, else the service's for it (the latest normalised spec), else undefined. */
  valueOf(path) {
    return getPath(this.spec, path) ?? getPath(this.normal, path);
  }

  /** Whether the latest normalised spec's value at ``path`` only echoes a value just cleared from the form (the
   * preview for the blank field has not answered yet): it is then no default to show. */
  echoes(path) {
    return getPath(this.spec, path) === undefined && getPath(this.normalAsked, path) !== undefined;
  }

  /** The channel to draw: the spec's sizes, the service's defaults for the blank ones (the channel's do not depend
   * on the rest of the case, so the blank case's stand in for a field just cleared until its preview answers). */
  channel() {
    const value = (k) => this.spec.channel?.[k]
      ?? (this.echoes(`channel.${k}`) ? this.blank : this.normal)?.channel?.[k];
    return {length: value("length"), height: value("height"), walls: value("walls")};
  }

  /** A value the service derives for the case as it is (the latest preview without problems' study fields, e.g.
   * the Reynolds number of a case given by its viscosity); undefined when unknown. */
  derived(path) {
    return this.lastGood?.sweepable?.find((f) => f.path === path)?.value;
  }

  /** Load a spec (from an example, JSON, a file or a job to re-run) into the form. */
  load(spec, {from = null} = {}) {
    this.loaded = true;
    this.spec = stripNulls(clone(spec));
    this.from = from;
    this.fromNote.hidden = !from;
    if (from) {
      fill(this.fromNote, "Editing a copy of job ", h("a", {href: `#/jobs/${from.id}`}, from.title || from.id),
        ". Queuing it makes a new job; the original stays as it is.");
    }
    this.localErrors.clear();
    this.showErrors([]);
    this.jsonDirty = false;
    this.jsonDirtyNote.hidden = true;
    this.renderFields();
    this.update();
    this.schedulePreview(this.currentSpec(), 0); // a new case: no typing to wait for
  }

  renderFields() {
    const active = document.activeElement?.id;
    const sp = this.spec;
    const ch = this.channel();
    const d = (path) => this.valueOf(path); // selects and checkboxes show the service's value for a blank field
    const transient = d("analysis.mode") === "transient";
    const adaptive = d("analysis.scheme") === ADAPTIVE;
    const byReynolds = isNum(sp.fluid?.reynolds) || (sp.fluid?.reynolds !== undefined && sp.fluid?.viscosity === undefined);
    const byMean = sp.inflow?.mean_velocity !== undefined && sp.inflow?.peak_velocity === undefined;
    const lawKind = d("inflow.time_law.kind");
    const bodies = sp.bodies ?? [];
    const pd = sp.probes?.pressure_drop;
    fill(this.fields,
      fieldset("Case", null,
        textField("title", "Title", sp, {placeholder: "A short description of the case"}), errorSlot("(spec)")),
      fieldset("Channel", "channel",
        h("div", {class: "row"},
          numberField("channel.length", "Length", sp, {unit: "m"}),
          numberField("channel.height", "Height", sp, {unit: "m"})),
        selectField("channel.walls", "Top and bottom walls", sp, [["no-slip", "No-slip (fluid sticks to the walls)"],
          ["slip", "Slip (free stream, walls do not slow the flow)"]], d("channel.walls"))),
      fieldset(`Bodies (${bodies.length})`, "bodies",
        bodies.length ? null : h("p", {class: "hint"}, "No bodies: the channel is empty."),
        h("ol", {class: "body-list"}, bodies.map((b, i) => this.bodyCard(b, i, ch))),
        h("div", {class: "row add-body"},
          h("label", {for: "new-shape"}, "Add a"),
          h("select", {id: "new-shape"}, SHAPES.map(([v, label]) => h("option", {value: v}, label))),
          h("button", {type: "button", class: "btn", id: "add-body", disabled: bodies.length >= 20,
            onclick: () => this.addBody(document.getElementById("new-shape").value)}, "Add body"))),
      fieldset("Fluid", "fluid",
        numberField("fluid.density", "Density ρ", sp, {unit: "kg/m³",
          hint: "Only scales forces and pressure; the coefficients do not depend on it."}),
        radioGroup("fluid-by", "Set the viscosity by", [["viscosity", "Kinematic viscosity ν"], ["reynolds", "Reynolds number Re"]],
          byReynolds ? "reynolds" : "viscosity", (v) => this.switchFluid(v)),
        byReynolds
          ? numberField("fluid.reynolds", "Reynolds number Re", sp, {hint: "Re = U·L/ν on the reference scales below."})
          : numberField("fluid.viscosity", "Kinematic viscosity ν", sp, {unit: "m²/s", hint: "Water at 20 °C: 1.004e-6 m²/s; air at 20 °C: 1.516e-5 m²/s."}),
        h("details", {class: "more", open: !!(sp.fluid?.reference?.velocity || sp.fluid?.reference?.length)},
          h("summary", {}, "Reference scales (optional)"),
          h("p", {class: "hint"}, "By default U is the mean inflow velocity and L the first body's diameter, chord or frontal height."),
          h("div", {class: "row"},
            numberField("fluid.reference.velocity", "Reference velocity U", sp, {unit: "m/s"}),
            numberField("fluid.reference.length", "Reference length L", sp, {unit: "m"})))),
      fieldset("Inflow", "inflow",
        selectField("inflow.profile", "Profile across the channel", sp, [["parabolic", "Parabolic (developed channel flow)"],
          ["uniform", "Uniform"]], d("inflow.profile")),
        radioGroup("inflow-by", "Give the inflow speed as", [["peak", "Peak velocity"], ["mean", "Mean velocity"]],
          byMean ? "mean" : "peak", (v) => this.switchInflow(v)),
        byMean ? numberField("inflow.mean_velocity", "Mean velocity", sp, {unit: "m/s"})
          : numberField("inflow.peak_velocity", "Peak velocity", sp, {unit: "m/s"}),
        numberField("inflow.ramp_time", "Ramp-up time", sp, {unit: "s",
          hint: "The inflow rises smoothly from rest over this time (transient runs)."}),
        selectField("inflow.time_law.kind", "Change over time", sp, [["constant", "Constant"],
          ["sine", "Sine: mean + amplitude · sin(2πt / period)"], ["table", "Table of (time, factor) points"]],
        d("inflow.time_law.kind"), {rerender: true}),
        lawKind === "sine" ? h("div", {class: "row"},
          numberField("inflow.time_law.period", "Period", sp, {unit: "s"}),
          numberField("inflow.time_law.amplitude", "Amplitude", sp),
          numberField("inflow.time_law.mean", "Mean", sp)) : null,
        lawKind === "table" ? pointsField("inflow.time_law.points", "Factor table: one “time, factor” pair a line", sp) : null),
      fieldset("Mesh", "mesh",
        h("div", {class: "row"},
          selectField("mesh.preset", "Density", sp, [["coarse", "Coarse"], ["medium", "Medium"], ["fine", "Fine"]], d("mesh.preset")),
          numberField("mesh.scale", "Size factor", sp, {hint: "Multiplies every cell size: 2 = cells twice as large."})),
        selectField("elements", "Elements", sp, [["P2P1", "P2/P1 (quadratic velocity)"], ["P3P2", "P3/P2 (cubic velocity)"]], d("elements")),
        checkboxField("mesh.curved", "Curved cells along the bodies", sp, d("mesh.curved")),
        h("details", {class: "more", open: ["body_size", "wake_size", "far_size", "wake_length"].some((k) => sp.mesh?.[k] !== undefined)},
          h("summary", {}, "Cell sizes (optional)"),
          h("div", {class: "row"},
            numberField("mesh.body_size", "At bodies", sp, {unit: "m"}),
            numberField("mesh.wake_size", "In the wake", sp, {unit: "m"})),
          h("div", {class: "row"},
            numberField("mesh.far_size", "Far field", sp, {unit: "m"}),
            numberField("mesh.wake_length", "Wake length", sp, {unit: "m"})))),
      fieldset("Analysis", "analysis",
        radioGroup("analysis-mode", "Kind of run", [["steady", "Steady (one flow state)"], ["transient", "Transient (in time)"]],
          transient ? "transient" : "steady", (v) => this.set("analysis.mode", v, true)),
        transient ? [
          selectField("analysis.scheme", "Time stepping", sp, [[ADAPTIVE, "Error-controlled steps (BDF2, recommended)"],
            ["bdf2-imex", "Fixed steps: BDF2, explicit convection"], ["euler-imex", "Fixed steps: Euler, explicit convection"],
            ["bdf2-implicit", "Fixed steps: BDF2, implicit"]], d("analysis.scheme"), {rerender: true}),
          h("div", {class: "row"},
            adaptive
              ? numberField("analysis.accuracy", "Accuracy", sp, {hint: "Allowed velocity error per step, relative to the flow speed, per convective time (length / speed). The solver picks its steps to meet it."})
              : numberField("analysis.time_step", "Time step Δt", sp, {unit: "s",
                hint: "Required for the fixed-step schemes. The preview warns when it is too long for explicit convection."}),
            numberField("analysis.end_time", "End time", sp, {unit: "s"})),
          h("div", {class: "row"},
            numberField("analysis.output_interval", "Picture every", sp, {unit: "s",
              hint: "Simulated time between field snapshots: one picture of each field per snapshot, up to the service's cap (see “Field pictures” below)."}),
            numberField("analysis.checkpoint_interval", "Checkpoint every", sp, {unit: "steps"})),
          checkboxToggle("analysis.until_periodic", "Stop early once the lift repeats itself", sp, {cycles: 3, tolerance: 0.01},
            (on) => this.set("analysis.until_periodic", on ? {cycles: 3, tolerance: 0.01} : undefined, true)),
          sp.analysis?.until_periodic ? h("div", {class: "row"},
            numberField("analysis.until_periodic.cycles", "Matching cycles", sp),
            numberField("analysis.until_periodic.tolerance", "Tolerance", sp)) : null,
        ] : h("div", {class: "row"},
          numberField("analysis.newton_tolerance", "Newton tolerance", sp),
          numberField("analysis.max_newton_iterations", "Max. Newton iterations", sp))),
      fieldset("Probes", "probes",
        checkboxToggle("probes.pressure_drop", "Measure the pressure drop Δp = p(a) − p(b)", sp, null,
          (on) => this.set("probes.pressure_drop", on ? defaultProbes(this.channel()) : undefined, true)),
        Array.isArray(pd) ? h("div", {class: "probe-points"},
          pointField("probes.pressure_drop.0", "Point a", sp), pointField("probes.pressure_drop.1", "Point b", sp)) : null,
        sp.probes?.velocity?.length ? h("p", {class: "hint"},
          `${sp.probes.velocity.length} velocity probe(s) set in the JSON.`) : null),
      this.heatFields());
    for (const [path, message] of this.localErrors) {
      if (!this.serverErrors?.some((p) => p.field === path)) this.putError(path, message);
    }
    if (this.serverErrors) this.placeErrors(this.serverErrors, false);
    this.showDefaults();
    if (active) document.getElementById(active)?.focus({preventScroll: true});
  }

  /** Temperature (forced convection): the fluid's thermal properties, the inflow temperature, the walls. */
  heatFields() {
    const sp = this.spec;
    const heat = sp.heat;
    const byPrandtl = isNum(heat?.prandtl) || (heat?.prandtl !== undefined && heat?.conductivity === undefined);
    return fieldset("Heat transfer", "heat",
      checkboxToggle("heat", "Solve for the temperature (forced convection: it does not act back on the flow)", sp, null,
        (on) => {
          if (!on) for (const b of this.spec.bodies ?? []) delete b.thermal;
          this.set("heat", on ? {inflow_temperature: 20} : undefined, true);
        }),
      heat ? [
        radioGroup("heat-by", "Thermal properties", [["conductivity", "Conductivity and heat capacity"], ["prandtl", "Prandtl number"]],
          byPrandtl ? "prandtl" : "conductivity", (v) => this.switchHeat(v)),
        byPrandtl
          ? numberField("heat.prandtl", "Prandtl number Pr", sp, {hint: "Air about 0.71, water at 20 °C about 7.0. Heat fluxes need the conductivity instead."})
          : h("div", {class: "row"},
            numberField("heat.conductivity", "Conductivity k", sp, {unit: "W/(m K)"}),
            numberField("heat.heat_capacity", "Heat capacity c", sp, {unit: "J/(kg K)",
              hint: "Empty: water at 20 °C. Air at 20 °C: 0.0257 W/(m K), 1005 J/(kg K)."})),
        numberField("heat.inflow_temperature", "Inflow temperature", sp, {unit: "°C"}),
        thermalField("heat.walls", "Top and bottom walls", sp, (v) => this.set("heat.walls", v, true)),
      ] : null);
  }

  switchHeat(by) {
    const heat = (this.spec.heat ??= {});
    delete heat.prandtl;
    delete heat.conductivity;
    delete heat.heat_capacity;
    if (by === "prandtl") heat.prandtl = 7.0;
    this.renderFields();
    this.update();
  }

  bodyCard(body, i, ch) {
    const p = `bodies.${i}`;
    const sp = this.spec;
    const shapeFields = {
      circle: () => [pointField(`${p}.center`, "Centre", sp),
        h("div", {class: "row"}, numberField(`${p}.radius`, "Radius", sp, {unit: "m"}),
          numberField(`${p}.spin`, "Spin", sp, {unit: "rad/s", hint: "Counter-clockwise rotation of the surface."}))],
      rectangle: () => [pointField(`${p}.center`, "Centre", sp),
        h("div", {class: "row"}, numberField(`${p}.width`, "Width", sp, {unit: "m"}), numberField(`${p}.height`, "Height", sp, {unit: "m"})),
        h("div", {class: "row"}, numberField(`${p}.angle`, "Angle", sp, {unit: "°"}),
          numberField(`${p}.corner_radius`, "Corner radius", sp, {unit: "m"}))],
      ellipse: () => [pointField(`${p}.center`, "Centre", sp),
        h("div", {class: "row"}, numberField(`${p}.width`, "Width", sp, {unit: "m"}), numberField(`${p}.height`, "Height", sp, {unit: "m"})),
        numberField(`${p}.angle`, "Angle", sp, {unit: "°"})],
      naca4: () => [
        h("div", {class: "row"}, textField(`${p}.code`, "Four digits", sp, {hint: "Camber, its position, thickness in % of chord: e.g. 0012, 2412."}),
          numberField(`${p}.chord`, "Chord", sp, {unit: "m"})),
        pointField(`${p}.leading_edge`, "Leading edge", sp),
        numberField(`${p}.angle_of_attack`, "Angle of attack", sp, {unit: "°"})],
      polygon: () => [pointsField(`${p}.points`, "Corner points: one “x, y” pair a line (metres)", sp)],
    };
    const make = shapeFields[body.shape] ?? (() => [h("p", {class: "hint"}, `Unknown shape “${body.shape}”: edit it in the JSON.`)]);
    return h("li", {class: "body-card", dataset: {index: i}},
      h("div", {class: "body-head"},
        h("h4", {id: `body-${i}-heading`}, `Body ${i + 1}`),
        h("div", {class: "button-row"},
          h("button", {type: "button", class: "btn btn-small", disabled: i === 0, "aria-label": `Move body ${i + 1} up the list`,
            onclick: () => this.reorder(i, -1)}, "↑"),
          h("button", {type: "button", class: "btn btn-small", disabled: i === (sp.bodies.length - 1),
            "aria-label": `Move body ${i + 1} down the list`, onclick: () => this.reorder(i, 1)}, "↓"),
          h("button", {type: "button", class: "btn btn-small btn-danger", id: `remove-body-${i}`,
            "aria-label": `Remove body ${i + 1}`, onclick: () => this.removeBody(i)}, "Remove"))),
      errorSlot(p),
      h("div", {class: "row"},
        textField(`${p}.name`, "Name", sp),
        selectField(`${p}.shape`, "Shape", sp, SHAPES, "circle", {rerender: true, onchange: (v) => {
          const fresh = newBody(v, ch, i);
          fresh.name = body.name || fresh.name;
          const old = this.spec.bodies[i];
          const anchor = old.center ?? old.leading_edge;
          if (Array.isArray(anchor) && fresh.center) fresh.center = [...anchor];
          this.spec.bodies[i] = fresh;
        }})),
      make(),
      this.mountFields(p, body),
      sp.heat ? thermalField(`${p}.thermal`, "Surface", sp, (v) => this.set(`${p}.thermal`, v === "insulated" ? undefined : v, true)) : null);
  }

  /** How the body is held: fixed, driven (a prescribed harmonic translation) or on springs the flow moves it on.
   * The service judges the values (the preview lists its problems and warnings); the form only edits them. */
  mountFields(p, body) {
    const sp = this.spec;
    const m = `${p}.mount`;
    const kind = body.mount?.kind ?? "fixed";
    const fresh = {
      driven: () => ({kind: "driven", direction: "y"}),
      spring: () => ({kind: "spring", directions: ["y"], mass_ratio: 10, damping_ratio: 0, reduced_velocity: 5}),
    };
    const select = h("select", {id: `${idOf(m)}-kind`, onchange: (e) => this.set(m, fresh[e.target.value]?.(), true)},
      [["fixed", "Fixed"], ["driven", "Driven: moved back and forth (harmonic)"], ["spring", "On springs: moved by the flow"]]
        .map(([value, text]) => h("option", {value, selected: value === kind}, text)));
    const parts = [field(m, "Mount", select, {hint: kind === "fixed" ? null
      : "A moving body needs a transient run with error-controlled steps; the mesh follows the body."})];
    if (kind === "driven") {
      parts.push(h("div", {class: "row"},
        selectField(`${m}.direction`, "Direction", sp, [["y", "Across the stream (y)"], ["x", "Along the stream (x)"]], "y"),
        numberField(`${m}.amplitude`, "Amplitude", sp, {unit: "m", hint: "Half the stroke."}),
        numberField(`${m}.frequency`, "Frequency", sp, {unit: "Hz"})));
    }
    if (kind === "spring") {
      const dirs = (body.mount.directions ?? ["y"]).join(",");
      const dirSelect = h("select", {id: idOf(`${m}.directions`), dataset: {path: `${m}.directions`, kind: "select"}},
        [["y", "Across the stream (y)"], ["x", "Along the stream (x)"], ["x,y", "Both (x and y)"]]
          .map(([value, text]) => h("option", {value, selected: value === dirs}, text)));
      dirSelect._onchange = (v) => setPath(this.spec, `${m}.directions`, v.split(","));
      const byFrequency = body.mount.natural_frequency !== undefined && body.mount.reduced_velocity === undefined;
      parts.push(
        h("div", {class: "row"},
          field(`${m}.directions`, "Free to move", dirSelect),
          numberField(`${m}.mass_ratio`, "Mass ratio m*", sp, {hint: "Body mass over the mass of fluid it displaces."}),
          numberField(`${m}.damping_ratio`, "Damping ratio ζ", sp, {placeholder: "0", hint: "Share of critical damping."})),
        radioGroup(`${idOf(m)}-by`, "Give the springs' stiffness as", [["reduced_velocity", "Reduced velocity U* = U / (f_n L)"],
          ["natural_frequency", "Natural frequency f_n (in vacuum)"]], byFrequency ? "natural_frequency" : "reduced_velocity",
        (v) => {
          const mount = this.spec.bodies[Number(p.split(".")[1])].mount;
          delete mount.reduced_velocity;
          delete mount.natural_frequency;
          this.set(`${m}.${v}`, null, true); // null: chosen, not yet given (the service says so)
        }),
        byFrequency ? numberField(`${m}.natural_frequency`, "Natural frequency f_n", sp, {unit: "Hz"})
          : numberField(`${m}.reduced_velocity`, "Reduced velocity U*", sp),
        h("details", {class: "more", open: !!(body.mount.initial_displacement || body.mount.initial_velocity)},
          h("summary", {}, "Start displaced or moving (optional)"),
          pointField(`${m}.initial_displacement`, "Initial displacement", sp, "m"),
          pointField(`${m}.initial_velocity`, "Initial velocity", sp, "m/s")));
    }
    return h("div", {class: "mount"}, parts);
  }

  // ---------- editing ----------
  set(path, value, rerender = false) {
    setPath(this.spec, path, value);
    this.clearError(path);
    if (rerender) this.renderFields();
    this.update();
  }

  onInput(e) {
    const el = e.target;
    const path = el.dataset?.path;
    if (!path) return;
    if (e.type === "change" && el.dataset.kind !== "select" && el.dataset.kind !== "checkbox") return;
    if (e.type === "input" && (el.dataset.kind === "select" || el.dataset.kind === "checkbox")) return;
    const kind = el.dataset.kind;
    let value;
    this.localErrors.delete(path);
    if (kind === "number") {
      const text = el.value.trim();
      if (text === "") value = undefined;
      else if (isNum(Number(text))) value = Number(text);
      else {
        value = text; // sent as typed: the service names the problem, and so do we
        this.localErrors.set(path, "Enter a number, e.g. 0.05 or 1e-3.");
      }
    } else if (kind === "checkbox") value = el.checked;
    else if (kind === "points") {
      const parsed = parsePoints(el.value);
      if (parsed === null) {
        this.localErrors.set(path, "Each line needs two numbers separated by a comma.");
        this.clearError(path);
        this.putError(path, this.localErrors.get(path));
        return;
      }
      value = parsed;
    } else value = el.value === "" && kind === "text" && path !== "title" ? undefined : el.value;
    if (el._onchange) el._onchange(value);
    else setPath(this.spec, path, value);
    this.clearError(path);
    if (this.localErrors.has(path)) this.putError(path, this.localErrors.get(path));
    if (el.dataset.rerender !== undefined) this.renderFields();
    this.update();
  }

  /** Give the fluid by the other quantity, starting from the value the service derives for the case as it is. */
  switchFluid(by) {
    const fluid = (this.spec.fluid ??= {});
    const other = by === "reynolds" ? "viscosity" : "reynolds";
    const value = this.derived(`fluid.${by}`);
    delete fluid[other];
    fluid[by] = isNum(value) ? Number(value.toPrecision(4)) : undefined;
    this.renderFields();
    this.update();
  }

  /** Give the inflow by its peak or its mean, starting from the service's value for the case as it is. */
  switchInflow(by) {
    const inflow = (this.spec.inflow ??= {});
    const [field, other] = by === "mean" ? ["mean_velocity", "peak_velocity"] : ["peak_velocity", "mean_velocity"];
    const value = this.derived(`inflow.${field}`);
    delete inflow[other];
    inflow[field] = isNum(value) ? Number(value.toPrecision(4)) : undefined;
    this.renderFields();
    this.update();
  }

  addBody(shape) {
    const bodies = (this.spec.bodies ??= []);
    const used = new Set(bodies.map((b) => b.name));
    const body = newBody(shape, this.channel(), bodies.length);
    let k = bodies.length + 1;
    while (used.has(body.name)) body.name = `body${++k}`;
    bodies.push(body);
    this.renderFields();
    this.update();
    document.getElementById(idOf(`bodies.${bodies.length - 1}.name`))?.focus();
  }

  removeBody(i) {
    this.spec.bodies.splice(i, 1);
    this.serverErrors = null;
    this.renderFields();
    this.update();
    const next = document.getElementById(`remove-body-${Math.min(i, this.spec.bodies.length - 1)}`) ?? document.getElementById("add-body");
    next?.focus();
  }

  reorder(i, step) {
    const b = this.spec.bodies;
    const j = i + step;
    [b[i], b[j]] = [b[j], b[i]];
    this.serverErrors = null;
    this.renderFields();
    this.update();
  }

  moveBody(i, dx, dy) {
    const body = this.spec.bodies?.[i];
    if (!body) return;
    translateBody(body, dx, dy);
    // refresh only the moved body's inputs so typing focus elsewhere is kept
    for (const input of this.fields.querySelectorAll(`[data-path^="bodies.${i}."]`)) {
      const v = getPath(this.spec, input.dataset.path);
      if (input.dataset.kind === "number") input.value = v ?? "";
      if (input.dataset.kind === "points") input.value = formatPoints(v);
    }
    this.clearError(`bodies.${i}`);
    this.update();
  }

  // ---------- derived figures, drawing, JSON ----------
  currentSpec() {
    return prune(clone(this.spec));
  }

  update() {
    const spec = this.currentSpec();
    this.showDefaults();
    this.showFigures(spec);
    this.schedulePreview(spec);
    if (!this.jsonDirty && document.activeElement !== this.json) this.json.value = JSON.stringify(spec, null, 2);
  }

  /** Ask the service for the preview (the solver's own figures) once typing pauses for PREVIEW_DELAY ms. */
  schedulePreview(spec, delay = PREVIEW_DELAY) {
    clearTimeout(this.previewTimer);
    this.previewTimer = setTimeout(async () => {
      this.previewAbort?.abort();
      const abort = new AbortController();
      this.previewAbort = abort;
      try {
        const preview = await api.preview(spec, abort.signal);
        this.preview = {...preview, asked: JSON.stringify(spec)}; // preview.spec is the normalised spec
      } catch (err) {
        if (err.name === "AbortError") return;
        this.preview = {asked: JSON.stringify(spec), failed: err.message};
      }
      const p = this.preview;
      if (p.outlines?.length) this.drawn = {bodies: clone(spec.bodies ?? []), outlines: p.outlines};
      if (p.spec) {
        this.normal = p.spec;
        this.normalAsked = spec;
        this.lastGood = p;
      }
      // the service's problems go beside their fields while typing, as a submit would put them
      if (p.problems && p.asked === JSON.stringify(this.currentSpec())) this.showErrors(p.problems, {summarise: false});
      this.showDefaults();
      this.showFigures(this.currentSpec());
    }, delay);
  }

  /** The live figures, warnings and drawing from the latest preview; marked as updating while the spec has changed
   * since. */
  showFigures(spec) {
    const p = this.preview;
    const stale = !p || p.asked !== JSON.stringify(spec);
    const warnings = [];
    const e = p?.estimate;
    const transient = this.valueOf("analysis.mode") === "transient";
    const items = [
      ["Reynolds number", isNum(p?.reynolds) ? num(p.reynolds, 4) : "—", "U·L/ν on the reference scales"],
      ["Blockage ratio", isNum(p?.blockage) ? `${num(100 * p.blockage, 3)} %` : "—", "share of the channel height the bodies cover"],
      ["Mesh", e ? `${integer(e.cells)} cells` : "—", e ? `${integer(e.dofs)} unknowns, ${e.method === "mesher"
        ? "from a dry run of the mesher" : "estimated (too big to mesh for a preview)"}` : ""],
    ];
    if (transient) {
      items.push(!e ? ["Time steps", "—", ""] : e.steps_method === "counted"
        ? ["Time steps", integer(e.steps), `${num(this.valueOf("analysis.end_time"))} s in steps of ${num(this.valueOf("analysis.time_step"))} s`]
        : ["Time steps", `about ${integer(e.steps)}`, "an estimate: the error control chooses them while it runs"]);
      if (isNum(e?.cfl)) items.push(["CFL near the bodies", `≈ ${num(e.cfl, 2)}`, "fastest inflow × Δt on the smallest cells"]);
    }
    if (e?.pictures) {
      const {snapshots, drawn, every, cap} = e.pictures;
      items.push(["Field pictures", `${integer(drawn)} of each field`, every > 1
        ? `every ${ordinal(every)} of ${integer(snapshots)} snapshots: at most ${cap} per field, evenly spread`
        : `one per snapshot (at most ${cap} per field)`]);
    }
    if (isNum(e?.seconds)) items.push(["Run time, roughly", duration(e.seconds), "an estimate from the unknowns and steps"]);
    if (p?.failed) warnings.push({message: `No preview: ${p.failed}`});
    for (const w of p?.problems ?? []) warnings.push({message: `${readable(w.field)}: ${w.message}`});
    // what the service allows but warns about (a fixed step past the CFL limit, a spring body with little room)
    for (const w of p?.warnings ?? []) warnings.push({message: `${readable(w.field)}: ${w.message}`, service: true});
    // the bodies the service finds fault with (overlaps, walls) are marked on the drawing
    const faulty = new Set();
    if (!stale) for (const problem of p.problems ?? []) {
      const m = /^bodies\.(\d+)/.exec(problem.field);
      if (m) faulty.add(Number(m[1]));
    }
    this.drawing.draw(spec, stale ? this.drawing.warned : faulty,
      {channel: this.channel(), profile: this.valueOf("inflow.profile"), outlines: this.outlines(spec)});
    this.figures.setAttribute("aria-busy", String(stale));
    fill(this.figures, items.map(([k, v, note]) => h("div", {class: "figure"},
      h("dt", {}, k), h("dd", {dataset: {figure: k}}, v, note ? h("small", {}, note) : null))));
    fill(this.warnings, warnings.map((w) => h("li", {class: w.service ? "service-warning" : null}, w.message)));
  }

  /** The outline of each body: the solver's, from the latest preview; a body only moved since is drawn moved with
   * it (a translation of the solver's outline), one changed otherwise once the service has answered. */
  outlines(spec) {
    return (spec.bodies ?? []).map((body, i) => {
      const was = this.drawn?.bodies[i];
      const outline = this.drawn?.outlines[i];
      const shift = was && outline ? moved(was, body) : null;
      return shift ? outline.points.map(([x, y]) => [x + shift[0], y + shift[1]]) : null;
    });
  }

  /** A blank field shows, as its placeholder, the value the service will use for it: the latest preview's
   * normalised spec (so what the form shows and what is submitted agree; the page guesses no default of its own).
   * A field just cleared shows none until the service has answered for it blank. */
  showDefaults() {
    if (!this.normal) return;
    for (const input of this.root.querySelectorAll('input[data-kind="number"], input[data-kind="text"]')) {
      if (input.dataset.path === "title") continue;
      const value = this.echoes(input.dataset.path) ? undefined : getPath(this.normal, input.dataset.path);
      input.placeholder = typeof value === "number" || typeof value === "string" ? String(value) : "";
    }
  }

  applyJson(text = this.json.value) {
    let data;
    try {
      data = JSON.parse(text);
    } catch (err) {
      this.jsonError.textContent = `Not valid JSON: ${err.message}`;
      this.jsonError.hidden = false;
      this.json.setAttribute("aria-invalid", "true");
      this.json.focus();
      return false;
    }
    if (!data || typeof data !== "object" || Array.isArray(data)) {
      this.jsonError.textContent = "The case must be a JSON object ({ … }).";
      this.jsonError.hidden = false;
      return false;
    }
    this.jsonError.hidden = true;
    this.json.removeAttribute("aria-invalid");
    this.load(data, {from: this.from});
    toast("JSON applied to the form.");
    return true;
  }

  async copyJson() {
    const text = JSON.stringify(this.currentSpec(), null, 2);
    try {
      await navigator.clipboard.writeText(text);
      toast("JSON copied.");
    } catch {
      this.json.value = text;
      this.json.select();
      toast("Copying is blocked here: the JSON is selected, press Ctrl+C.", "info");
    }
  }

  async pasteJson() {
    try {
      const text = await navigator.clipboard.readText();
      this.json.value = text;
      this.applyJson(text);
    } catch {
      this.json.focus();
      this.json.select();
      toast("Reading the clipboard is blocked here: paste into the box with Ctrl+V, then apply.", "info");
    }
  }

  uploadFile(e) {
    const file = e.target.files?.[0];
    if (!file) return;
    file.text().then((text) => {
      this.json.value = text;
      this.applyJson(text);
      e.target.value = "";
    });
  }

  downloadJson() {
    const blob = new Blob([JSON.stringify(this.currentSpec(), null, 2) + "\n"], {type: "application/json"});
    const a = h("a", {href: URL.createObjectURL(blob), download: `${slug(this.spec.title) || "case"}.json`});
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
  }

  // ---------- errors ----------
  clearError(path) {
    for (const slot of this.root.querySelectorAll("[data-error-for]")) {
      const p = slot.dataset.errorFor;
      if (p === path || path.startsWith(`${p}.`) || p.startsWith(`${path}.`)) {
        slot.replaceChildren();
        slot.hidden = true;
      }
    }
    for (const input of this.root.querySelectorAll("[aria-invalid]")) {
      const p = input.dataset.path ?? "";
      if (p === path || p.startsWith(`${path}.`) || path.startsWith(`${p}.`)) input.removeAttribute("aria-invalid");
    }
    if (this.serverErrors) {
      this.serverErrors = this.serverErrors.filter((e) => !(e.field === path || path.startsWith(`${e.field}.`) || e.field.startsWith(`${path}.`)));
    }
  }

  /** Put one message into the slot for path or the nearest enclosing slot; returns the slot. */
  putError(path, message) {
    const parts = path ? path.split(".") : [];
    let slot = null;
    for (let n = parts.length; n > 0 && !slot; n--) {
      slot = this.root.querySelector(`[data-error-for="${CSS.escape(parts.slice(0, n).join("."))}"]`);
    }
    slot ??= this.root.querySelector('[data-error-for="(spec)"]');
    slot.append(h("span", {class: "error-line"}, slot.dataset.errorFor === path ? message : `${readable(path)}: ${message}`));
    slot.hidden = false;
    for (const input of this.root.querySelectorAll("[data-path]")) {
      const p = input.dataset.path;
      if (p === path || p.startsWith(`${path}.`)) input.setAttribute("aria-invalid", "true");
    }
    return slot;
  }

  /** Put ``problems`` beside their fields (and the local ones); ``summarise``: list them above the form too and
   * move the focus there (after a submit, not while typing). */
  showErrors(problems, {summarise = true} = {}) {
    this.serverErrors = problems.length ? problems : null;
    for (const slot of this.root.querySelectorAll("[data-error-for]")) {
      slot.replaceChildren();
      slot.hidden = true;
    }
    for (const input of this.root.querySelectorAll("[aria-invalid]")) input.removeAttribute("aria-invalid");
    for (const [path, message] of this.localErrors) {
      if (!problems.some((p) => p.field === path)) this.putError(path, message);
    }
    this.placeErrors(problems, summarise);
    if (!summarise && !problems.length) this.summary.hidden = true;
  }

  placeErrors(problems, summarise) {
    const placed = problems.map((p) => ({...p, slot: this.putError(p.field, p.message)}));
    if (!summarise) return;
    if (!placed.length) {
      this.summary.hidden = true;
      return;
    }
    fill(this.summary,
      h("h3", {}, placed.length === 1 ? "The service could not accept this case:" : `The service found ${placed.length} problems in this case:`),
      h("ul", {}, placed.map((p) => h("li", {}, h("a", {href: `#${p.slot.id}`, onclick: (e) => {
        e.preventDefault();
        const target = this.root.querySelector(`[data-path="${CSS.escape(p.field)}"]`)
          ?? this.root.querySelector(`[data-path^="${CSS.escape(p.field)}."]`) ?? p.slot;
        target.scrollIntoView({block: "center"});
        target.focus?.();
      }}, p.field ? readable(p.field) : "Case"), `: ${p.message}`))));
    this.summary.hidden = false;
    this.summary.focus();
  }

  // ---------- submit ----------
  async submit(e) {
    e.preventDefault();
    const button = document.getElementById("submit-case");
    button.disabled = true;
    button.textContent = "Queuing…";
    try {
      const tags = this.tags.split(",").map((t) => t.trim()).filter(Boolean);
      const created = await api.createJob(this.currentSpec(), tags);
      this.showErrors([]);
      toast(`Queued as job ${created.id}.`);
      this.onQueued(created);
    } catch (err) {
      if (err instanceof ApiError && err.status === 422) this.showErrors(err.problems);
      else this.showErrors([{field: "", message: err.message}]);
    } finally {
      button.disabled = false;
      button.textContent = "Queue this case";
    }
  }
}

// ---------- field builders ----------

function errorSlot(path) {
  return h("p", {class: "field-error", id: `err-${idOf(path)}`, dataset: {errorFor: path}, hidden: true, "aria-live": "polite"});
}

function field(path, label, input, {unit, hint} = {}) {
  const hintId = hint ? `hint-${idOf(path)}` : null;
  const described = [`err-${idOf(path)}`, hintId].filter(Boolean).join(" ");
  if (input.setAttribute) input.setAttribute("aria-describedby", described);
  return h("div", {class: "field"},
    h("label", {for: input.id}, label),
    h("div", {class: "input-wrap"}, input),
    hint ? h("p", {class: "hint", id: hintId}, hint) : null,
    errorSlot(path));
}

function numberField(path, label, spec, {unit, hint, placeholder} = {}) {
  const v = getPath(spec, path);
  const input = h("input", {id: idOf(path), type: "text", inputmode: "decimal", autocomplete: "off",
    value: v === undefined || v === null ? "" : String(v), placeholder: placeholder ?? "", dataset: {path, kind: "number"}});
  return field(path, unit ? `${label} (${unit})` : label, input, {unit, hint});
}

function textField(path, label, spec, {placeholder, hint} = {}) {
  const v = getPath(spec, path);
  const input = h("input", {id: idOf(path), type: "text", value: v ?? "", placeholder: placeholder ?? "", autocomplete: "off",
    dataset: {path, kind: "text"}});
  return field(path, label, input, {hint});
}

function selectField(path, label, spec, options, fallback, {rerender = false, onchange, hint} = {}) {
  const v = getPath(spec, path) ?? fallback;
  const select = h("select", {id: idOf(path), dataset: {path, kind: "select"}},
    options.map(([value, text]) => h("option", {value, selected: value === v}, text)));
  if (rerender) select.dataset.rerender = "";
  if (onchange) select._onchange = onchange;
  return field(path, label, select, {hint});
}

function checkboxField(path, label, spec, fallback) {
  const v = getPath(spec, path) ?? fallback;
  const input = h("input", {type: "checkbox", id: idOf(path), checked: !!v, dataset: {path, kind: "checkbox"}});
  return h("div", {class: "field field-check"}, input, h("label", {for: input.id}, label), errorSlot(path));
}

/** A checkbox that adds or removes a whole sub-object (it has no data-path of its own). */
function checkboxToggle(path, label, spec, _fallback, onToggle) {
  const on = getPath(spec, path) !== undefined && getPath(spec, path) !== null;
  const input = h("input", {type: "checkbox", id: `${idOf(path)}-on`, checked: on, onchange: (e) => onToggle(e.target.checked)});
  return h("div", {class: "field field-check"}, input, h("label", {for: input.id}, label), errorSlot(path));
}

function radioGroup(name, legend, options, value, onPick) {
  return h("fieldset", {class: "radio-group"}, h("legend", {}, legend),
    options.map(([v, text]) => h("label", {class: "radio"},
      h("input", {type: "radio", name, value: v, id: `${name}-${v}`, checked: v === value,
        onchange: (e) => e.target.checked && onPick(v)}), text)));
}

function pointField(path, label, spec, unit = "m") {
  const v = getPath(spec, path);
  const input = (k, axis) => h("input", {id: idOf(`${path}.${k}`), type: "text", inputmode: "decimal", autocomplete: "off",
    value: Array.isArray(v) && v[k] !== undefined && v[k] !== null ? String(v[k]) : "",
    "aria-describedby": `err-${idOf(path)}`, dataset: {path: `${path}.${k}`, kind: "number"}});
  return h("fieldset", {class: "field point"}, h("legend", {}, `${label} (${unit})`),
    h("div", {class: "row"},
      h("div", {class: "input-wrap"}, h("label", {for: idOf(`${path}.0`), class: "axis"}, "x"), input(0, "x")),
      h("div", {class: "input-wrap"}, h("label", {for: idOf(`${path}.1`), class: "axis"}, "y"), input(1, "y"))),
    errorSlot(path));
}

function pointsField(path, label, spec) {
  const v = getPath(spec, path);
  const area = h("textarea", {id: idOf(path), rows: Math.min(Math.max((v?.length ?? 3) + 1, 3), 10), class: "points",
    spellcheck: false, dataset: {path, kind: "points"}});
  area.value = formatPoints(v);
  return field(path, label, area);
}

/** A surface's thermal condition: "insulated", {temperature: °C} or {heat_flux: W/m²}. */
function thermalField(path, label, spec, onPick) {
  const v = getPath(spec, path);
  const kind = v?.temperature !== undefined ? "temperature" : v?.heat_flux !== undefined ? "heat_flux" : "insulated";
  const fresh = {insulated: "insulated", temperature: {temperature: 60}, heat_flux: {heat_flux: 1000}};
  const select = h("select", {id: `${idOf(path)}-kind`, onchange: (e) => onPick(fresh[e.target.value])},
    [["insulated", "Insulated"], ["temperature", "Fixed temperature"], ["heat_flux", "Fixed heat flux"]].map(([value, text]) =>
      h("option", {value, selected: value === kind}, text)));
  return h("div", {class: "row"}, field(path, `${label}: thermal condition`, select),
    kind === "temperature" ? numberField(`${path}.temperature`, "Temperature", spec, {unit: "°C"}) : null,
    kind === "heat_flux" ? numberField(`${path}.heat_flux`, "Heat flux into the fluid", spec, {unit: "W/m²"}) : null);
}

function fieldset(legend, path, ...children) {
  return h("fieldset", {class: "card group"}, h("legend", {}, legend), path ? errorSlot(path) : null, children);
}

function parsePoints(text) {
  const lines = text.split(/\n/).map((l) => l.trim()).filter(Boolean);
  const pts = [];
  for (const line of lines) {
    const parts = line.replace(/[[\]()]/g, "").split(/[,;\s]+/).filter(Boolean).map(Number);
    if (parts.length !== 2 || !parts.every(isNum)) return null;
    pts.push(parts);
  }
  return pts;
}

function formatPoints(pts) {
  return Array.isArray(pts) ? pts.map((p) => (Array.isArray(p) ? p.join(", ") : String(p))).join("\n") : "";
}

function defaultProbes({length: L, height: H}) {
  const r = (v) => Number(v.toPrecision(3));
  return [[r(L * 0.1), r(H / 2)], [r(L * 0.6), r(H / 2)]];
}

function stripNulls(value) {
  if (Array.isArray(value)) return value.map(stripNulls);
  if (value && typeof value === "object") {
    const out = {};
    for (const [k, v] of Object.entries(value)) if (v !== null) out[k] = stripNulls(v);
    return out;
  }
  return value;
}

/** Where a body's anchor (centre, leading edge or first corner) is. */
function anchor(body) {
  const a = body?.center ?? body?.leading_edge ?? body?.points?.[0];
  return Array.isArray(a) && isNum(a[0]) && isNum(a[1]) ? a : null;
}

/** [dx, dy] when body ``now`` is body ``was`` moved by it and otherwise the same shape, else null. */
function moved(was, now) {
  const [a, b] = [anchor(was), anchor(now)];
  if (!a || !b) return null;
  const shape = (body, [x0, y0]) => {
    const {center, leading_edge, points, name, thermal, spin, mount, ...rest} = body;
    const round = (v) => Math.round(v * 1e9) / 1e9;
    const corners = Array.isArray(points) ? points.map((p) => [round(p[0] - x0), round(p[1] - y0)]) : null;
    return JSON.stringify({...rest, corners});
  };
  return shape(was, a) === shape(now, b) ? [b[0] - a[0], b[1] - a[1]] : null;
}

/** "bodies.0.radius" → "Body 1 › radius" for people. */
export function readable(path) {
  if (!path || path === "(spec)") return "Case";
  return path.split(".").map((part, i, all) => {
    if (/^\d+$/.test(part) && all[i - 1] === "bodies") return null;
    if (part === "bodies" && /^\d+$/.test(all[i + 1] ?? "")) return `Body ${Number(all[i + 1]) + 1}`;
    return part.replaceAll("_", " ");
  }).filter(Boolean).join(" › ");
}

function slug(text) {
  return String(text ?? "").toLowerCase().replace(/[^a-z0-9]+/g, "-").replace(/^-|-$/g, "").slice(0, 60);
}

function ordinal(n) {
  const tail = n % 100 >= 11 && n % 100 <= 13 ? "th" : {1: "st", 2: "nd", 3: "rd"}[n % 10] ?? "th";
  return `${n}${tail}`;
}
