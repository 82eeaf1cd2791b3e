// One job: state and progress while it runs; summary, force histories, field pictures and
// downloads once it has results.

import {ACTIVE, api} from "./api.js";
import {LineChart, PALETTE} from "./chart.js";
import {LiveForces} from "./live_forces.js";
import {orbitCard} from "./orbit.js";
import {Poller} from "./poller.js";
import {picked, progressCell, savePicked} from "./queue.js";
import {spectrumCard} from "./spectrum.js";
import {caution, downloadLink, jobTitle, loadForces, showPicture, sizeText, stateBadge, summaryTable} from "./results.js";
import {confirmCancel, duration, fill, h, num, secondsBetween, toast, when} from "./util.js";

const FIELDS = [["speed", "Speed"], ["vorticity", "Vorticity"], ["pressure", "Pressure"], ["temperature", "Temperature"]];
const HEAT_PLOTS = [["nusselt.png", "Mean Nusselt number over time"], ["local_nusselt.png", "Local Nusselt number around each heated body"]];

export class JobView {
  constructor(root, {onEdit}) {
    this.root = root;
    this.onEdit = onEdit;
    this.job = null;
    this.poller = new Poller(() => this.refresh(), {min: 1000, max: 10000});
  }

  show(id) {
    this.poller.stop();
    this.id = id;
    this.job = null;
    this.resultsFor = null;
    this.head = h("div", {class: "job-head"});
    this.status = h("section", {class: "card job-status", "aria-labelledby": "status-heading"});
    this.results = h("div", {class: "job-results"});
    this.live = h("section", {class: "card chart-card", id: "live-card", "aria-labelledby": "live-heading", hidden: true});
    this.liveForces = new LiveForces(id);
    this.liveChart = null;
    fill(this.root, h("p", {class: "back"}, h("a", {href: "#/queue"}, "← Queue")), this.head, this.status, this.live,
      this.results);
    this.poller.kick();
  }

  hide() {
    this.poller.stop();
    clearInterval(this.playing);
  }

  async refresh() {
    let job;
    try {
      job = await api.getJob(this.id);
    } catch (err) {
      fill(this.head, h("h2", {}, "Job not available"), h("p", {class: "message"}, err.message));
      return {active: err.status !== 404 && err.status !== 401, changed: false};
    }
    const before = this.job ? `${this.job.state}:${this.job.progress?.step}:${this.job.cancel_requested}` : "";
    const after = `${job.state}:${job.progress?.step}:${job.cancel_requested}`;
    this.job = job;
    if (before !== after) {
      // the buttons only change with the state: keep them (and keyboard focus) across progress updates
      if (before.split(":")[0] !== job.state || !before || before.split(":")[2] !== String(job.cancel_requested)) this.renderHead();
      this.renderStatus();
      if (!ACTIVE.has(job.state) && this.resultsFor !== job.state) {
        this.resultsFor = job.state;
        this.renderResults();
      }
    }
    if (job.attempts !== this.liveAttempt) {
      // a retried run starts forces.csv again from its checkpoint: read it from the top
      this.liveAttempt = job.attempts;
      this.liveForces = new LiveForces(job.id);
    }
    if (job.state === "running") await this.updateLive();
    else this.live.hidden = true; // finished: the results show the whole history
    return {active: ACTIVE.has(job.state), changed: before !== after};
  }

  /** Extend the live chart of drag and lift with the rows the run added since the last poll. */
  async updateLive() {
    let forces;
    try {
      forces = await this.liveForces.update();
    } catch {
      return; // the next poll tries again
    }
    if (!forces || forces.time.length < 2) return;
    if (!this.liveChart) {
      const host = h("div", {class: "chart-host", id: "live-chart"});
      fill(this.live, h("h3", {id: "live-heading"}, "Force history so far"),
        h("p", {class: "hint"}, "Drag (solid) and lift (dashed) coefficients, extended while the job runs."), host);
      this.liveChart = new LineChart(host, {label: "Force coefficients of the running job", yLabel: "cD, cL"});
    }
    this.live.hidden = false;
    const hidden = new Set(this.liveChart.series?.filter((sr) => !sr.visible).map((sr) => sr.id)); // keep legend choices
    const owners = [...new Set(forces.columns.map((c) => c.owner))];
    this.liveChart.setSeries(forces.columns.filter((c) => c.quantity === "cd" || c.quantity === "cl").map((c) => ({
      id: c.key, label: c.label, x: forces.time, y: c.values, visible: !hidden.has(c.key),
      color: PALETTE[owners.indexOf(c.owner) % PALETTE.length], dash: c.quantity === "cl" ? "6 4" : "",
    })));
    this.live.dataset.rows = String(forces.time.length);
  }

  renderHead() {
    const job = this.job;
    const active = ACTIVE.has(job.state);
    const isPicked = picked.has(job.id);
    fill(this.head,
      h("div", {class: "view-head"},
        h("h2", {id: "job-heading"}, jobTitle(job), " ", stateBadge(job.state)),
        h("div", {class: "button-row"},
          active ? h("button", {type: "button", class: "btn", id: "job-cancel", onclick: () => this.cancel()}, "Cancel") : null,
          h("button", {type: "button", class: "btn", id: "job-edit", onclick: () => this.onEdit(job)}, "Re-run with edits"),
          h("button", {type: "button", class: "btn", id: "job-again", onclick: () => this.again()}, "Run again"),
          h("button", {type: "button", class: "btn", id: "job-pick", "aria-pressed": String(isPicked), onclick: () => {
            if (picked.has(job.id)) picked.delete(job.id);
            else picked.add(job.id);
            savePicked();
            this.renderHead();
          }}, isPicked ? "Picked for comparison" : "Pick for comparison"),
          !active ? h("button", {type: "button", class: "btn btn-danger", id: "job-delete", onclick: () => this.remove()}, "Delete") : null)),
      h("p", {class: "job-meta"},
        h("span", {}, "Job ", h("code", {}, job.id)), h("span", {}, `owner ${job.owner ?? "—"}`),
        (job.tags ?? []).map((t) => h("span", {class: "tag"}, t))));
  }

  renderStatus() {
    const job = this.job;
    const rows = [
      ["Submitted", when(job.created_at), job.created_at],
      ["Started", when(job.started_at), job.started_at],
      ["Finished", when(job.finished_at), job.finished_at],
      ["Waited", job.started_at ? duration(secondsBetween(job.created_at, job.started_at)) : "—"],
      ["Ran for", job.started_at ? duration(secondsBetween(job.started_at, job.finished_at)) : "—"],
      ["Attempts", String(job.attempts ?? 0)],
    ];
    if (job.worker_host) rows.push(["Worker", job.worker_host]);
    fill(this.status,
      h("h3", {id: "status-heading"}, "Status"),
      progressCell(job),
      h("dl", {class: "meta-grid"}, rows.map(([k, v, title]) => h("div", {}, h("dt", {}, k), h("dd", {title: title ?? ""}, v)))),
      job.error ? h("div", {class: "error-box", role: "alert"}, h("strong", {}, "What went wrong: "), job.error) : null);
  }

  async renderResults() {
    const job = this.job;
    fill(this.results, h("p", {class: "hint"}, "Loading results…"));
    let files = [];
    try {
      files = await api.listFiles(job.id);
    } catch (err) {
      fill(this.results, h("p", {class: "message"}, err.message));
      return;
    }
    const paths = new Set(files.map((f) => f.path));
    const parts = [];
    if (job.summary || paths.has("forces.csv")) parts.push(caution(job.caution));
    if (job.state !== "succeeded" && paths.has("forces.csv")) {
      parts.push(h("p", {class: "hint"}, "The run did not finish: these are the results it wrote before it stopped."));
    }
    const summaryCard = h("section", {class: "card", "aria-labelledby": "summary-heading"},
      h("h3", {id: "summary-heading"}, "Summary"), job.summary ? summaryTable(job) : h("p", {class: "hint"}, "No summary: the run did not complete."));
    const chartCard = h("section", {class: "card chart-card", "aria-labelledby": "forces-heading"}, h("h3", {id: "forces-heading"}, "Force history"));
    const pictureCard = h("section", {class: "card pictures", "aria-labelledby": "pictures-heading"}, h("h3", {id: "pictures-heading"}, "Field pictures"));
    const downloads = h("section", {class: "card downloads", "aria-labelledby": "downloads-heading"}, h("h3", {id: "downloads-heading"}, "Downloads"));
    parts.push(h("div", {class: "results-grid"}, summaryCard, chartCard), pictureCard, downloads,
      h("details", {class: "card spec-details"}, h("summary", {}, "Case as JSON"),
        h("pre", {class: "json"}, JSON.stringify(job.spec, null, 2))));
    fill(this.results, parts);
    if (paths.has("forces.csv")) this.renderForces(chartCard);
    else chartCard.append(h("p", {class: "hint"}, "No force history was written."));
    this.renderPictures(pictureCard, files);
    if (paths.has("pictures/mesh.png")) this.renderMesh(pictureCard);
    this.renderHeat(pictureCard, paths);
    this.renderDownloads(downloads, files);
  }

  async renderForces(card) {
    let forces;
    try {
      forces = await loadForces(this.job.id);
    } catch (err) {
      card.append(h("p", {class: "message"}, err.message));
      return;
    }
    this.stepTimes = forces.time;
    this.updatePicture?.();
    if (forces.time.length < 2) {
      // steady run: one row of values
      card.append(h("table", {class: "summary-table", id: "force-values"},
        h("caption", {class: "visually-hidden"}, "Forces of the steady state"),
        h("tbody", {}, forces.columns.map((c) => h("tr", {}, h("th", {scope: "row"}, c.label), h("td", {}, num(c.values[0], 6)))))));
      return;
    }
    const groups = [
      ["coefficients", "Coefficients cD, cL", (c) => c.quantity === "cd" || c.quantity === "cl"],
      ["forces", "Forces Fx, Fy (N per metre of span)", (c) => c.quantity === "fx" || c.quantity === "fy"],
      ["pressure", "Pressure drop Δp (Pa)", (c) => c.key === "pressure_drop"],
      ["probes", "Probe velocities (m/s)", (c) => c.quantity === "ux" || c.quantity === "uy"],
      ["motion", "Displacement dx, dy (m) of the moving bodies", (c) => c.quantity === "dx" || c.quantity === "dy"],
      ["steps", "Time step Δt (s)", (c) => c.key === "time_step"],
    ].filter(([, , pick]) => forces.columns.some(pick));
    const host = h("div", {class: "chart-host", id: "force-chart"});
    const choose = h("select", {id: "force-quantity"}, groups.map(([key, label]) => h("option", {value: key}, label)));
    const chart = new LineChart(host, {label: "Force history over simulated time", yLabel: ""});
    const owners = [...new Set(forces.columns.map((c) => c.owner))];
    const show = () => {
      const [, label, pick] = groups.find(([key]) => key === choose.value);
      chart.yLabel = label;
      chart.setSeries(forces.columns.filter(pick).map((c) => ({
        id: c.key, label: c.label, x: forces.time, y: c.values,
        color: PALETTE[owners.indexOf(c.owner) % PALETTE.length],
        dash: ["cl", "fy", "uy", "dy"].includes(c.quantity) ? "6 4" : "",
      })));
    };
    choose.addEventListener("change", show);
    card.append(h("div", {class: "field inline"}, h("label", {for: "force-quantity"}, "Show"), choose), host);
    show();
    this.chart = chart;
    const motion = groups.some(([key]) => key === "motion") ? this.motionCard(forces, owners) : null;
    if (motion) (card.closest(".results-grid") ?? card).after(motion);
    if (forces.columns.some((c) => c.quantity === "cl")) (card.closest(".results-grid") ?? card).after(await spectrumCard(this.job.id));
  }

  /** Displacement histories of the moving bodies beside the forces, and each two-way mover's orbit. */
  motionCard(forces, owners) {
    const host = h("div", {class: "chart-host", id: "motion-chart"});
    const card = h("section", {class: "card chart-card", id: "motion-card", "aria-labelledby": "motion-heading"},
      h("h3", {id: "motion-heading"}, "Body motion"),
      h("p", {class: "hint"}, "Displacement from the drawn position: dx along the stream (solid), dy across it (dashed)."), host);
    const chart = new LineChart(host, {label: "Displacement of the moving bodies over simulated time", yLabel: "dx, dy (m)"});
    chart.setSeries(forces.columns.filter((c) => c.quantity === "dx" || c.quantity === "dy").map((c) => ({
      id: c.key, label: c.label, x: forces.time, y: c.values,
      color: PALETTE[owners.indexOf(c.owner) % PALETTE.length], dash: c.quantity === "dy" ? "6 4" : "",
    })));
    const orbit = orbitCard(forces, owners);
    return orbit ? h("div", {class: "motion-cards"}, card, orbit) : card;
  }

  renderPictures(card, files) {
    const byKind = {};
    for (const f of files) {
      const m = /^pictures\/(speed|vorticity|pressure|temperature)_(\d+)\.png$/.exec(f.path);
      if (m) (byKind[m[1]] ??= new Map()).set(Number(m[2]), f.path);
    }
    const kinds = FIELDS.filter(([k]) => byKind[k]);
    if (!kinds.length) {
      card.append(h("p", {class: "hint"}, "No field pictures were written."));
      return;
    }
    const steps = [...new Set(kinds.flatMap(([k]) => [...byKind[k].keys()]))].sort((a, b) => a - b);
    const transient = this.job.spec?.analysis?.mode === "transient";
    let kind = kinds[0][0];
    let index = steps.length - 1;
    const img = h("img", {class: "field-picture", id: "field-picture", alt: "", decoding: "async"});
    const caption = h("figcaption", {id: "picture-caption", "aria-live": "polite"});
    const slider = h("input", {type: "range", id: "snapshot", min: 0, max: steps.length - 1, step: 1, value: index,
      "aria-describedby": "picture-caption", disabled: steps.length < 2});
    const play = h("button", {type: "button", class: "btn btn-small", id: "picture-play", disabled: steps.length < 2}, "Play");
    const update = () => {
      const step = steps[index];
      const path = byKind[kind].get(step) ?? null;
      // steps vary in length: a snapshot's time is that of its row in forces.csv (step n is row n)
      const time = transient ? (step === 0 ? 0 : this.stepTimes?.[step - 1]) : undefined;
      const t = time !== undefined ? ` · t = ${num(time, 4)} s` : "";
      const label = FIELDS.find(([k]) => k === kind)[1];
      caption.textContent = `${label}, snapshot ${index + 1} of ${steps.length} (step ${step}${t})`;
      slider.setAttribute("aria-valuetext", caption.textContent);
      if (!path) {
        img.removeAttribute("src");
        img.alt = "No picture of this field at this snapshot";
        return;
      }
      img.alt = `${label} field at step ${step}${t}`;
      img.dataset.path = path;
      showPicture(img, this.job.id, path).catch((err) => toast(err.message, "error"));
    };
    this.updatePicture = update;
    slider.addEventListener("input", () => {
      index = Number(slider.value);
      update();
    });
    play.addEventListener("click", () => {
      if (this.playing) {
        clearInterval(this.playing);
        this.playing = null;
        play.textContent = "Play";
        return;
      }
      play.textContent = "Pause";
      this.playing = setInterval(() => {
        index = (index + 1) % steps.length;
        slider.value = index;
        update();
      }, 700);
    });
    const radios = h("fieldset", {class: "radio-group inline"}, h("legend", {}, "Field"),
      kinds.map(([k, label]) => h("label", {class: "radio"}, h("input", {type: "radio", name: "field-kind", value: k, checked: k === kind,
        id: `field-${k}`, onchange: () => {
          kind = k;
          update();
        }}), label)));
    card.append(h("div", {class: "picture-controls"}, radios,
      h("div", {class: "field slider"}, h("label", {for: "snapshot"}, "Snapshot"), slider, play)),
    h("figure", {}, img, caption));
    update();
  }

  /** The mesh the run used: the whole channel and a close-up of each body. */
  renderMesh(pictureCard) {
    const label = "Mesh: the whole channel and a close-up of each body";
    const img = h("img", {class: "field-picture", id: "mesh-picture", alt: label, decoding: "async", dataset: {path: "pictures/mesh.png"}});
    pictureCard.after(h("section", {class: "card pictures", "aria-labelledby": "mesh-heading"},
      h("h3", {id: "mesh-heading"}, "Mesh"), h("figure", {}, img, h("figcaption", {}, label))));
    showPicture(img, this.job.id, "pictures/mesh.png").catch((err) => toast(err.message, "error"));
  }

  /** The heat-transfer plots (runs that solved for the temperature), after the field pictures. */
  renderHeat(pictureCard, paths) {
    const plots = HEAT_PLOTS.filter(([path]) => paths.has(path));
    if (!plots.length) return;
    const card = h("section", {class: "card pictures heat-plots", "aria-labelledby": "heat-heading"},
      h("h3", {id: "heat-heading"}, "Heat transfer"));
    for (const [path, label] of plots) {
      const img = h("img", {class: "field-picture", alt: label, decoding: "async", dataset: {path}});
      card.append(h("figure", {}, img, h("figcaption", {}, label)));
      showPicture(img, this.job.id, path).catch((err) => toast(err.message, "error"));
    }
    pictureCard.after(card);
  }

  renderDownloads(card, files) {
    const main = [
      ["forces.csv", "Force history (CSV)"], ["summary.json", "Summary (JSON)"], ["forces.png", "Force plot (PNG)"],
      ["fields.zip", "Fields for ParaView (zip of VTU + PVD)"], ["spec.json", "Case (JSON)"],
      ["heat.csv", "Nusselt history (CSV)"], ["local_nusselt.csv", "Local Nusselt numbers (CSV)"],
    ];
    const byPath = new Map(files.map((f) => [f.path, f]));
    const list = h("ul", {class: "download-list"});
    if (files.length) {
      // the server zips every result file of the job (with the caution) on request
      list.append(h("li", {}, downloadLink(this.job.id, "all-files.zip", "Everything (zip of all files)", {id: "download-all"})));
    }
    for (const [path, label] of main) {
      const f = byPath.get(path);
      if (f) list.append(h("li", {}, downloadLink(this.job.id, path, label), h("small", {}, ` ${sizeText(f.size)}`)));
    }
    const rest = files.filter((f) => !main.some(([p]) => p === f.path));
    card.append(list, rest.length ? h("details", {}, h("summary", {}, `All ${files.length} files`),
      h("ul", {class: "download-list all-files"}, rest.map((f) => h("li", {}, downloadLink(this.job.id, f.path, f.path),
        h("small", {}, ` ${sizeText(f.size)}`))))) : null);
  }

  async cancel() {
    if (!confirmCancel(jobTitle(this.job), this.job.state)) return;
    try {
      await api.cancelJob(this.job.id);
      toast("Cancel requested.");
    } catch (err) {
      toast(err.message, "error");
    }
    this.poller.kick();
  }

  async again() {
    try {
      const created = await api.cloneJob(this.job.id);
      toast(`Queued a copy as job ${created.id}.`);
      location.hash = `#/jobs/${created.id}`;
    } catch (err) {
      toast(err.message, "error");
    }
  }

  async remove() {
    if (!window.confirm(`Delete “${jobTitle(this.job)}” and all its files? This cannot be undone.`)) return;
    try {
      await api.deleteJob(this.job.id);
      picked.delete(this.job.id);
      savePicked();
      toast("Job deleted.");
      location.hash = "#/queue";
    } catch (err) {
      toast(err.message, "error");
    }
  }
}
