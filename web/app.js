// wakeyard's page: a hash router over five views (new case, queue, one job, compare, studies) and the token box.

import {api, getToken, setToken} from "./api.js";
import {CompareView} from "./compare.js";
import {CaseForm} from "./form.js";
import {JobView} from "./job.js";
import {QueueView, picked} from "./queue.js";
import {StudiesView} from "./studies.js";
import {StudyBuilder} from "./study_form.js";
import {sizeText} from "./results.js";
import {toast} from "./util.js";

const views = {
  new: document.getElementById("view-new"),
  queue: document.getElementById("view-queue"),
  job: document.getElementById("view-job"),
  compare: document.getElementById("view-compare"),
  studies: document.getElementById("view-studies"),
};

/** Load a job's spec into the form for a re-run with edits. */
async function editJob(job) {
  let full = job;
  if (!full.spec) full = await api.getJob(job.id);
  form.load(full.spec, {from: {id: full.id, title: full.title || full.spec?.title}});
  form.tags = (full.tags ?? []).join(", ");
  const tagInput = document.getElementById("f-tags");
  if (tagInput) tagInput.value = form.tags;
  location.hash = "#/new";
}

const form = new CaseForm(views.new, {onQueued: (created) => {
  location.hash = `#/jobs/${created.id}`;
}});
const queue = new QueueView(views.queue, {onEdit: editJob});
const jobView = new JobView(views.job, {onEdit: editJob});
const compare = new CompareView(views.compare);
const builder = new StudyBuilder({baseCase: () => form.currentSpec(), onQueued: (created) => {
  location.hash = `#/studies/${created.id}`;
}});
const studies = new StudiesView(views.studies, {builder});

function route() {
  const hash = location.hash || "#/queue";
  const [path, query = ""] = hash.slice(1).split("?");
  const parts = path.split("/").filter(Boolean);
  const name = parts[0] === "jobs" && parts[1] ? "job" : parts[0] in views ? parts[0] : "queue";
  for (const [key, el] of Object.entries(views)) el.hidden = key !== name;
  for (const link of document.querySelectorAll("[data-nav]")) {
    if (link.dataset.nav === name) link.setAttribute("aria-current", "page");
    else link.removeAttribute("aria-current");
  }
  if (name !== "queue") queue.hide();
  if (name !== "job") jobView.hide();
  if (name !== "studies") studies.hide();
  if (name === "studies") studies.show(parts[1] ? decodeURIComponent(parts[1]) : null);
  if (name === "queue") queue.show();
  if (name === "job") jobView.show(decodeURIComponent(parts[1]));
  if (name === "compare") {
    const ids = new URLSearchParams(query).get("ids");
    compare.show(ids ? ids.split(",") : [...picked]);
  }
  const titles = {new: "New case", queue: "Queue", job: "Job", compare: "Compare", studies: "Studies"};
  document.title = `${titles[name]} · wakeyard`;
  // move focus to the new view's heading for keyboard and screen-reader users
  const heading = views[name].querySelector("h2");
  if (heading && document.activeElement?.closest?.("main") === null) {
    heading.setAttribute("tabindex", "-1");
    heading.focus({preventScroll: true});
  }
  window.scrollTo(0, 0);
}

// ---- token box ----
const tokenInput = document.getElementById("token");
const tokenState = document.getElementById("token-state");
function showTokenState() {
  tokenState.textContent = getToken() ? "Token saved in this browser." : "No token (fine for a single-user service).";
}
tokenInput.value = getToken();
showTokenState();
document.getElementById("token-form").addEventListener("submit", (e) => {
  e.preventDefault();
  setToken(tokenInput.value.trim());
  showTokenState();
  toast(getToken() ? "Token saved." : "Token removed.");
  route();
  usage();
});
document.getElementById("token-forget").addEventListener("click", () => {
  tokenInput.value = "";
  setToken("");
  showTokenState();
  toast("Token removed.");
  route();
});

// ---- service health dot ----
async function health() {
  const dot = document.getElementById("health");
  try {
    const hh = await api.health();
    dot.dataset.state = hh.status === "ok" ? "ok" : "degraded";
    dot.title = `Service ${hh.status}: ${hh.queue_depth ?? 0} queued, ${hh.running ?? 0} running, ${hh.workers_seen ?? "?"} worker(s) seen`;
    showHealthProblems(hh.problems ?? []);
  } catch (err) {
    dot.dataset.state = "down";
    dot.title = `Service not healthy: ${err.message}`;
    showHealthProblems([dot.title]);
  }
  dot.setAttribute("aria-label", dot.title);
}

function showHealthProblems(problems) {
  const note = document.getElementById("health-note");
  note.textContent = problems.length ? `Service degraded: ${problems.join("; ")}` : "";
  note.hidden = !problems.length;
}
health();

// ---- the service's caution, in the page footer ----
api.caution().then((c) => {
  document.getElementById("caution-foot").textContent = c.caution;
}).catch(() => {
  /* the views show it again with every result */
});

// ---- the caller's disk use against the quota (GET /api/v1/me), in the footer ----
async function usage() {
  const foot = document.getElementById("usage-foot");
  try {
    const me = await api.me();
    const {used_bytes: used, quota_bytes: quota} = me.disk;
    foot.textContent = `Signed in as ${me.name} · disk used: ${sizeText(used)}` +
      (quota ? ` of ${sizeText(quota)} (${Math.round((100 * used) / quota)} %)` : " (no quota)");
    foot.hidden = false;
  } catch {
    foot.hidden = true; // no token yet, or the service is down: the health dot says so
  }
}
usage();

setInterval(() => {
  if (document.hidden) return;
  health();
  usage();
}, 30000);

window.addEventListener("hashchange", route);
route();
