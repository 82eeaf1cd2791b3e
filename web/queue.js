// The queue: every job of the team, a page at a time, with filters, progress and actions.

import {ACTIVE, STATES, api} from "./api.js";
import {Poller} from "./poller.js";
import {jobTitle, stateBadge} from "./results.js";
import {confirmCancel, duration, fill, h, num, secondsBetween, shortId, toast, when} from "./util.js";

/** Jobs picked for comparison (kept for the browser tab). */
export const picked = new Set(JSON.parse(sessionStorage.getItem("wakeyard.compare") || "[]"));
export function savePicked() {
  sessionStorage.setItem("wakeyard.compare", JSON.stringify([...picked]));
  document.dispatchEvent(new CustomEvent("picked-changed"));
}

export function progressCell(job) {
  const p = job.progress ?? {};
  const fraction = job.state === "succeeded" ? 1 : Math.max(0, Math.min(1, p.fraction ?? 0));
  const end = job.spec?.analysis?.mode === "transient" ? job.spec?.analysis?.end_time : null;
  const parts = [];
  if (job.state === "running") {
    if (end && p.time !== null && p.time !== undefined) parts.push(`t = ${num(p.time, 3)} of ${num(end, 3)} s`);
    else if (p.step) parts.push(`step ${p.step}`);
    if (p.eta_seconds !== null && p.eta_seconds !== undefined) parts.push(`about ${duration(p.eta_seconds)} left`);
    if (job.cancel_requested) parts.push("stopping…");
  } else if (job.state === "queued") parts.push(job.cancel_requested ? "cancelling…" : "waiting for a worker");
  else if (job.state === "succeeded") parts.push(end ? `${num(end, 3)} s simulated` : "steady state");
  else if (job.state === "failed") parts.push("failed");
  else if (job.state === "cancelled") parts.push(p.time ? `stopped at t = ${num(p.time, 3)} s` : "stopped");
  const pct = Math.round(fraction * 100);
  return h("div", {class: "progress-cell"},
    h("div", {class: `bar state-${job.state}`, role: "progressbar", "aria-valuemin": "0", "aria-valuemax": "100",
      "aria-valuenow": String(pct), "aria-label": `Progress of ${jobTitle(job)}`},
    h("span", {style: `width:${pct}%`})),
    h("small", {}, `${pct} % · ${parts.join(" · ")}`));
}

export class QueueView {
  constructor(root, {onEdit}) {
    this.root = root;
    this.onEdit = onEdit;
    this.filters = {state: "", owner: "", tag: "", limit: 50};
    this.cursors = [null]; // cursor of each page visited; last = current page
    this.jobs = [];
    this.next = null;
    this.signature = null;
    this.poller = new Poller(() => this.refresh(), {onState: (state, delay) => this.showLive(state, delay)});
    this.build();
  }

  build() {
    const stateSel = h("select", {id: "filter-state"}, h("option", {value: ""}, "All states"),
      STATES.map((s) => h("option", {value: s}, s)));
    const owner = h("input", {id: "filter-owner", type: "search", placeholder: "anyone", autocomplete: "off"});
    const tag = h("input", {id: "filter-tag", type: "search", placeholder: "any tag", autocomplete: "off"});
    const limit = h("select", {id: "filter-limit"}, [25, 50, 100, 200].map((n) => h("option", {value: n, selected: n === 50}, n)));
    let debounce;
    const changed = () => {
      clearTimeout(debounce);
      debounce = setTimeout(() => {
        this.filters = {state: stateSel.value, owner: owner.value.trim(), tag: tag.value.trim(), limit: Number(limit.value)};
        this.cursors = [null];
        this.load();
      }, 250);
    };
    for (const el of [stateSel, limit]) el.addEventListener("change", changed);
    for (const el of [owner, tag]) el.addEventListener("input", changed);
    this.live = h("span", {class: "live", id: "live-state", "aria-live": "off"});
    this.count = h("p", {class: "count", "aria-live": "polite"});
    this.compareBar = h("div", {class: "compare-bar"});
    this.tbody = h("tbody", {});
    this.pager = h("nav", {class: "pager", "aria-label": "Pages of jobs"});
    this.message = h("p", {class: "message", role: "status"});
    fill(this.root,
      h("div", {class: "view-head"}, h("h2", {}, "Queue"),
        h("div", {class: "button-row"}, this.live,
          h("button", {type: "button", class: "btn", onclick: () => this.load()}, "Refresh"))),
      h("form", {class: "filters card", role: "search", "aria-label": "Filter jobs", onsubmit: (e) => e.preventDefault()},
        h("div", {class: "field"}, h("label", {for: "filter-state"}, "State"), stateSel),
        h("div", {class: "field"}, h("label", {for: "filter-owner"}, "Owner"), owner),
        h("div", {class: "field"}, h("label", {for: "filter-tag"}, "Tag"), tag),
        h("div", {class: "field"}, h("label", {for: "filter-limit"}, "Per page"), limit)),
      this.compareBar, this.message,
      h("div", {class: "table-wrap"},
        h("table", {class: "jobs"},
          h("caption", {class: "visually-hidden"}, "Jobs, newest first"),
          h("thead", {}, h("tr", {},
            h("th", {scope: "col"}, h("span", {class: "visually-hidden"}, "Pick for comparison")),
            h("th", {scope: "col"}, "Case"), h("th", {scope: "col"}, "Owner"), h("th", {scope: "col"}, "State"),
            h("th", {scope: "col"}, "Progress"), h("th", {scope: "col"}, "Submitted"), h("th", {scope: "col"}, "Started"),
            h("th", {scope: "col"}, "Finished"), h("th", {scope: "col"}, "Actions"))),
          this.tbody)),
      this.count, this.pager);
    document.addEventListener("picked-changed", () => this.renderCompareBar());
    this.renderCompareBar();
  }

  show() {
    this.load();
  }

  hide() {
    this.poller.stop();
  }

  load() {
    this.signature = null;
    this.poller.kick();
  }

  async refresh() {
    try {
      const cursor = this.cursors[this.cursors.length - 1];
      const {items, next} = await api.listJobs({...this.filters, cursor});
      this.jobs = items;
      this.next = next;
      this.message.textContent = "";
    } catch (err) {
      this.message.textContent = err.message;
      if (err.status === 401 || err.status === 422) return {active: false, changed: false};
      throw err;
    }
    const signature = this.jobs.map((j) => `${j.id}:${j.state}:${j.progress?.step}:${j.cancel_requested}`).join("|");
    const changed = signature !== this.signature;
    if (changed) {
      this.signature = signature;
      this.render();
    }
    return {active: this.jobs.some((j) => ACTIVE.has(j.state)), changed};
  }

  showLive(state, delay) {
    this.live.textContent = state === "live" ? `Updating every ${Math.round(delay / 1000)} s`
      : state === "paused" ? "Updates paused" : "Up to date (nothing running)";
    this.live.dataset.state = state;
  }

  render() {
    const focusId = document.activeElement?.id;
    const frag = document.createDocumentFragment();
    for (const job of this.jobs) frag.append(this.row(job));
    this.tbody.replaceChildren(frag);
    if (!this.jobs.length) {
      this.tbody.append(h("tr", {}, h("td", {colspan: 9, class: "empty"},
        this.cursors.length > 1 ? "No more jobs." : "No jobs match. Queue one from “New case”.")));
    }
    const page = this.cursors.length;
    this.count.textContent = `Page ${page}: ${this.jobs.length} job${this.jobs.length === 1 ? "" : "s"}`;
    fill(this.pager,
      h("button", {type: "button", class: "btn", id: "page-first", disabled: page === 1, onclick: () => {
        this.cursors = [null];
        this.load();
      }}, "Newest"),
      h("button", {type: "button", class: "btn", id: "page-prev", disabled: page === 1, onclick: () => {
        this.cursors.pop();
        this.load();
      }}, "← Newer"),
      h("button", {type: "button", class: "btn", id: "page-next", disabled: !this.next, onclick: () => {
        this.cursors.push(this.next);
        this.load();
      }}, "Older →"));
    if (focusId) document.getElementById(focusId)?.focus({preventScroll: true});
  }

  row(job) {
    const id = job.id;
    const active = ACTIVE.has(job.state);
    const check = h("input", {type: "checkbox", id: `pick-${id}`, checked: picked.has(id),
      "aria-label": `Pick ${jobTitle(job)} for comparison`, onchange: (e) => {
        if (e.target.checked) picked.add(id);
        else picked.delete(id);
        savePicked();
      }});
    const started = job.started_at ? when(job.started_at) : "—";
    const ran = job.started_at ? duration(secondsBetween(job.started_at, job.finished_at)) : null;
    return h("tr", {dataset: {id, state: job.state}},
      h("td", {class: "pick"}, check),
      h("td", {class: "case", "data-label": "Case"},
        h("a", {href: `#/jobs/${id}`}, jobTitle(job)), h("small", {class: "id"}, shortId(id)),
        (job.tags ?? []).map((t) => h("span", {class: "tag"}, t))),
      h("td", {"data-label": "Owner"}, job.owner ?? "—"),
      h("td", {"data-label": "State"}, stateBadge(job.state)),
      h("td", {"data-label": "Progress", class: "progress"}, progressCell(job)),
      h("td", {"data-label": "Submitted", title: job.created_at ?? ""}, when(job.created_at)),
      h("td", {"data-label": "Started", title: job.started_at ?? ""}, started),
      h("td", {"data-label": "Finished", title: job.finished_at ?? ""}, when(job.finished_at),
        ran && job.finished_at ? h("small", {}, ` (${ran})`) : null),
      h("td", {class: "actions", "data-label": "Actions"},
        active ? h("button", {type: "button", class: "btn btn-small", id: `cancel-${id}`, onclick: () => this.cancel(job)}, "Cancel") : null,
        h("button", {type: "button", class: "btn btn-small", id: `edit-${id}`, onclick: () => this.onEdit(job)}, "Re-run with edits"),
        !active ? h("button", {type: "button", class: "btn btn-small btn-danger", id: `delete-${id}`, onclick: () => this.remove(job)}, "Delete") : null));
  }

  renderCompareBar() {
    const n = picked.size;
    fill(this.compareBar,
      h("span", {}, n ? `${n} job${n === 1 ? "" : "s"} picked for comparison` : "Tick two or more jobs to compare them."),
      h("a", {class: `btn${n >= 2 ? " btn-primary" : " disabled"}`, href: n >= 2 ? `#/compare?ids=${[...picked].join(",")}` : undefined,
        "aria-disabled": n >= 2 ? "false" : "true", id: "compare-picked"}, "Compare"),
      n ? h("button", {type: "button", class: "btn btn-small", onclick: () => {
        picked.clear();
        savePicked();
        this.render();
      }}, "Clear") : null);
  }

  async cancel(job) {
    if (!confirmCancel(jobTitle(job), job.state)) return;
    try {
      await api.cancelJob(job.id);
      toast(`Cancel requested for ${jobTitle(job)}.`);
    } catch (err) {
      toast(err.message, "error");
    }
    this.load();
  }

  async remove(job) {
    if (!window.confirm(`Delete “${jobTitle(job)}” and all its files? This cannot be undone.`)) return;
    try {
      await api.deleteJob(job.id);
      picked.delete(job.id);
      savePicked();
      toast(`Deleted ${jobTitle(job)}.`);
    } catch (err) {
      toast(err.message, "error");
    }
    this.load();
  }
}
