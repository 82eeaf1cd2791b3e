// A small interactive SVG line chart: hover to read values, drag (or type) to zoom to a time window,
// legend buttons to show/hide series, arrow keys to step through samples. No dependencies.

import {h, num, s} from "./util.js";

export const PALETTE = ["#1f6f8b", "#c2593f", "#5b8c3a", "#8a5a9e", "#b58a13", "#3f4f6b", "#c24f83", "#2f9c95"];

const MARGIN = {left: 58, right: 14, top: 12, bottom: 40};

function niceStep(span, target) {
  const raw = span / Math.max(target, 1);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const norm = raw / mag;
  return (norm < 1.5 ? 1 : norm < 3.5 ? 2 : norm < 7.5 ? 5 : 10) * mag;
}

function ticks(lo, hi, target) {
  if (!(hi > lo)) return [lo];
  const step = niceStep(hi - lo, target);
  const out = [];
  for (let v = Math.ceil(lo / step - 1e-9) * step; v <= hi + step * 1e-9; v += step) out.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  return out;
}

/** Index of the last x <= value in a sorted array (clamped). */
function bisect(xs, value) {
  let lo = 0;
  let hi = xs.length - 1;
  if (value <= xs[0]) return 0;
  if (value >= xs[hi]) return hi;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (xs[mid] <= value) lo = mid;
    else hi = mid;
  }
  return lo;
}

function nearest(xs, value) {
  const i = bisect(xs, value);
  return i + 1 < xs.length && Math.abs(xs[i + 1] - value) < Math.abs(xs[i] - value) ? i + 1 : i;
}

export class LineChart {
  /**
   * @param {HTMLElement} host  element the chart fills
   * @param {{label: string, xLabel?: string, yLabel?: string}} options
   */
  constructor(host, {label, xLabel = "time t [s]", yLabel = ""} = {}) {
    this.host = host;
    this.label = label;
    this.xLabel = xLabel;
    this.yLabel = yLabel;
    this.series = [];
    this.window = null; // [t0, t1] zoom window, null = everything
    this.cursor = null; // x value under the cursor
    this.width = 640;
    this.height = 300;
    host.classList.add("chart");
    this.legend = h("div", {class: "chart-legend", role: "group", "aria-label": `Series shown in ${label}`});
    this.svg = s("svg", {class: "chart-svg", role: "group", "aria-roledescription": "interactive chart", tabindex: "0",
      "aria-label": `${label}. Arrow keys read the values sample by sample.`});
    this.tip = h("div", {class: "chart-tip", hidden: true, "aria-hidden": "true"});
    this.live = h("div", {class: "visually-hidden", "aria-live": "polite"});
    this.from = h("input", {type: "number", step: "any", class: "chart-from", "aria-label": "Zoom from time"});
    this.to = h("input", {type: "number", step: "any", class: "chart-to", "aria-label": "Zoom to time"});
    const zoomForm = h("form", {class: "chart-zoom", onsubmit: (e) => {
      e.preventDefault();
      const a = parseFloat(this.from.value);
      const b = parseFloat(this.to.value);
      if (Number.isFinite(a) && Number.isFinite(b) && b > a) this.zoom([a, b]);
    }},
    h("label", {}, "Time window ", this.from), h("span", {}, "to"), this.to,
    h("button", {type: "submit", class: "btn btn-small"}, "Zoom"),
    h("button", {type: "button", class: "btn btn-small chart-reset", onclick: () => this.zoom(null)}, "Show all"));
    const help = h("p", {class: "hint chart-help"},
      "Drag across the chart to zoom to a time window. With the chart focused: ← → step through samples, ",
      "+ / − zoom, 0 shows all.");
    this.plot = h("div", {class: "chart-plot"}, this.svg, this.tip);
    host.replaceChildren(this.legend, this.plot, zoomForm, help, this.live);
    this.bindEvents();
    this.resizeObserver = new ResizeObserver(() => this.resize());
    this.resizeObserver.observe(this.plot);
  }

  /** series: [{id, label, x: number[], y: number[], color, dash, visible}] */
  setSeries(series) {
    this.series = series.map((sr, i) => ({visible: true, color: PALETTE[i % PALETTE.length], ...sr}));
    this.renderLegend();
    this.render();
  }

  visibleSeries() {
    return this.series.filter((sr) => sr.visible && sr.x.length);
  }

  xExtent() {
    const all = this.series.filter((sr) => sr.x.length);
    if (!all.length) return [0, 1];
    const lo = Math.min(...all.map((sr) => sr.x[0]));
    const hi = Math.max(...all.map((sr) => sr.x[sr.x.length - 1]));
    return hi > lo ? [lo, hi] : [lo - 0.5, lo + 0.5];
  }

  zoom(window) {
    const [lo, hi] = this.xExtent();
    if (window) {
      const a = Math.max(window[0], lo);
      const b = Math.min(window[1], hi);
      this.window = b > a ? [a, b] : null;
    } else this.window = null;
    this.live.textContent = this.window ? `Zoomed to t = ${num(this.window[0])} … ${num(this.window[1])} s` : "Showing all times";
    this.render();
  }

  domain() {
    const [x0, x1] = this.window ?? this.xExtent();
    let y0 = Infinity;
    let y1 = -Infinity;
    for (const sr of this.visibleSeries()) {
      const a = Math.max(bisect(sr.x, x0) - 1, 0);
      const b = Math.min(bisect(sr.x, x1) + 1, sr.x.length - 1);
      for (let i = a; i <= b; i++) {
        const v = sr.y[i];
        if (Number.isFinite(v)) {
          if (v < y0) y0 = v;
          if (v > y1) y1 = v;
        }
      }
    }
    if (!Number.isFinite(y0)) [y0, y1] = [0, 1];
    if (y1 - y0 < 1e-12 * Math.max(1, Math.abs(y0))) {
      const pad = Math.abs(y0) * 0.05 || 0.5;
      [y0, y1] = [y0 - pad, y1 + pad];
    } else {
      const pad = (y1 - y0) * 0.06;
      [y0, y1] = [y0 - pad, y1 + pad];
    }
    return {x0, x1, y0, y1};
  }

  resize() {
    const w = Math.round(this.plot.clientWidth);
    if (w > 0 && Math.abs(w - this.width) > 1) {
      this.width = w;
      this.height = Math.round(Math.min(340, Math.max(220, w * 0.45)));
      this.render();
    }
  }

  scales() {
    const d = this.domain();
    const pw = this.width - MARGIN.left - MARGIN.right;
    const ph = this.height - MARGIN.top - MARGIN.bottom;
    const sx = (x) => MARGIN.left + ((x - d.x0) / (d.x1 - d.x0)) * pw;
    const sy = (y) => MARGIN.top + (1 - (y - d.y0) / (d.y1 - d.y0)) * ph;
    const ix = (px) => d.x0 + ((px - MARGIN.left) / pw) * (d.x1 - d.x0);
    return {d, pw, ph, sx, sy, ix};
  }

  /** Path of one series inside the window; min/max per pixel column when the data are denser than the screen. */
  pathOf(sr, sc) {
    const {d, sx, sy, pw} = sc;
    const a = bisect(sr.x, d.x0);
    const b = Math.min(bisect(sr.x, d.x1) + 1, sr.x.length - 1);
    const parts = [];
    let pen = "M";
    const put = (x, y) => {
      if (!Number.isFinite(y)) {
        pen = "M";
        return;
      }
      parts.push(`${pen}${sx(x).toFixed(2)},${sy(y).toFixed(2)}`);
      pen = "L";
    };
    if (b - a <= 2 * pw) {
      for (let i = a; i <= b; i++) put(sr.x[i], sr.y[i]);
    } else {
      let col = -1;
      let lo = null;
      let hi = null;
      const flush = () => {
        if (lo === null) return;
        if (lo[0] <= hi[0]) {
          put(...lo);
          put(...hi);
        } else {
          put(...hi);
          put(...lo);
        }
      };
      for (let i = a; i <= b; i++) {
        const c = Math.floor(sx(sr.x[i]));
        const v = sr.y[i];
        if (c !== col) {
          flush();
          col = c;
          lo = hi = null;
        }
        if (!Number.isFinite(v)) continue;
        if (lo === null || v < lo[1]) lo = [sr.x[i], v];
        if (hi === null || v > hi[1]) hi = [sr.x[i], v];
      }
      flush();
    }
    return parts.join("");
  }

  renderLegend() {
    this.legend.replaceChildren(...this.series.map((sr) => h("button", {
      type: "button", class: "legend-item", "aria-pressed": String(sr.visible), dataset: {series: sr.id},
      title: `${sr.label}: ${sr.visible ? "click to hide" : "click to show"}`,
      onclick: (e) => {
        sr.visible = !sr.visible;
        e.currentTarget.setAttribute("aria-pressed", String(sr.visible));
        e.currentTarget.title = `${sr.label}: ${sr.visible ? "click to hide" : "click to show"}`;
        this.render();
      }},
    s("svg", {width: "22", height: "10", "aria-hidden": "true"},
      s("line", {x1: "1", y1: "5", x2: "21", y2: "5", stroke: sr.color, "stroke-width": "2.5", "stroke-dasharray": sr.dash || ""})),
    sr.label)));
  }

  render() {
    const sc = this.scales();
    const {d, pw, ph, sx, sy} = sc;
    const svg = this.svg;
    svg.setAttribute("viewBox", `0 0 ${this.width} ${this.height}`);
    svg.setAttribute("width", this.width);
    svg.setAttribute("height", this.height);
    Object.assign(svg.dataset, {x0: d.x0, x1: d.x1, y0: d.y0, y1: d.y1, left: MARGIN.left, top: MARGIN.top,
      plotWidth: pw, plotHeight: ph});
    const grid = s("g", {class: "chart-grid"});
    const axes = s("g", {class: "chart-axes"});
    for (const t of ticks(d.y0, d.y1, Math.max(3, Math.floor(ph / 45)))) {
      grid.append(s("line", {x1: MARGIN.left, x2: MARGIN.left + pw, y1: sy(t), y2: sy(t)}));
      axes.append(s("text", {x: MARGIN.left - 6, y: sy(t) + 4, "text-anchor": "end"}, num(t, 3)));
    }
    for (const t of ticks(d.x0, d.x1, Math.max(3, Math.floor(pw / 90)))) {
      grid.append(s("line", {x1: sx(t), x2: sx(t), y1: MARGIN.top, y2: MARGIN.top + ph}));
      axes.append(s("text", {x: sx(t), y: MARGIN.top + ph + 16, "text-anchor": "middle"}, num(t, 4)));
    }
    axes.append(s("text", {x: MARGIN.left + pw / 2, y: this.height - 6, "text-anchor": "middle", class: "axis-title"}, this.xLabel));
    if (this.yLabel) {
      axes.append(s("text", {x: 12, y: MARGIN.top + ph / 2, "text-anchor": "middle", class: "axis-title",
        transform: `rotate(-90 12 ${MARGIN.top + ph / 2})`}, this.yLabel));
    }
    const clipId = `clip-${Math.random().toString(36).slice(2)}`;
    const lines = s("g", {"clip-path": `url(#${clipId})`, class: "chart-lines"});
    for (const sr of this.visibleSeries()) {
      lines.append(s("path", {d: this.pathOf(sr, sc), stroke: sr.color, "stroke-dasharray": sr.dash || "",
        fill: "none", class: "series", dataset: {series: sr.id}}));
    }
    this.cursorLayer = s("g", {class: "chart-cursor"});
    this.brush = s("rect", {class: "chart-brush", y: MARGIN.top, height: ph, width: 0, visibility: "hidden"});
    this.hit = s("rect", {class: "chart-hit", x: MARGIN.left, y: MARGIN.top, width: pw, height: ph});
    svg.replaceChildren(
      s("defs", {}, s("clipPath", {id: clipId}, s("rect", {x: MARGIN.left, y: MARGIN.top, width: pw, height: ph}))),
      grid, s("rect", {class: "chart-frame", x: MARGIN.left, y: MARGIN.top, width: pw, height: ph}),
      axes, lines, this.cursorLayer, this.brush, this.hit);
    this.from.value = num(d.x0, 6);
    this.to.value = num(d.x1, 6);
    if (this.cursor !== null) this.showCursor(this.cursor);
  }

  /** Draw the crosshair at time x and list every visible series' value there. */
  showCursor(x) {
    const sc = this.scales();
    const shown = this.visibleSeries();
    this.cursorLayer.replaceChildren();
    if (!shown.length || x === null) {
      this.tip.hidden = true;
      return;
    }
    const ref = shown[0];
    const i0 = nearest(ref.x, x);
    const t = ref.x[i0];
    this.cursor = t;
    const px = sc.sx(t);
    this.cursorLayer.append(s("line", {x1: px, x2: px, y1: MARGIN.top, y2: MARGIN.top + sc.ph}));
    const rows = [h("div", {class: "tip-time"}, `t = ${num(t, 6)} s`)];
    for (const sr of shown) {
      const i = nearest(sr.x, t);
      if (Math.abs(sr.x[i] - t) > 1e-9 * Math.max(1, Math.abs(t)) && shown.length > 1 && sr !== ref) {
        // another job's samples: use its nearest sample and say its time
        rows.push(h("div", {class: "tip-row", dataset: {series: sr.id}},
          h("span", {class: "swatch", style: `background:${sr.color}`}), `${sr.label}: ${num(sr.y[i], 6)} (t = ${num(sr.x[i], 4)})`));
      } else {
        rows.push(h("div", {class: "tip-row", dataset: {series: sr.id}},
          h("span", {class: "swatch", style: `background:${sr.color}`}), `${sr.label}: ${num(sr.y[i], 6)}`));
      }
      if (Number.isFinite(sr.y[i]) && sr.x[i] >= sc.d.x0 && sr.x[i] <= sc.d.x1) {
        this.cursorLayer.append(s("circle", {cx: sc.sx(sr.x[i]), cy: sc.sy(sr.y[i]), r: 3.5, fill: sr.color}));
      }
    }
    this.tip.replaceChildren(...rows);
    this.tip.hidden = false;
    const left = px + 12 + 220 > this.width ? Math.max(px - 232, 0) : px + 12;
    this.tip.style.left = `${left}px`;
    this.tip.style.top = `${MARGIN.top + 4}px`;
    this.live.textContent = rows.map((r) => r.textContent).join(", ");
  }

  hideCursor() {
    this.cursor = null;
    this.cursorLayer?.replaceChildren();
    this.tip.hidden = true;
  }

  localX(event) {
    const rect = this.svg.getBoundingClientRect();
    return ((event.clientX - rect.left) * this.width) / rect.width;
  }

  bindEvents() {
    let dragStart = null;
    this.svg.addEventListener("pointerdown", (e) => {
      if (e.button !== 0) return;
      dragStart = this.localX(e);
      this.svg.setPointerCapture(e.pointerId);
    });
    this.svg.addEventListener("pointermove", (e) => {
      const px = this.localX(e);
      const sc = this.scales();
      if (dragStart !== null) {
        const a = Math.max(Math.min(dragStart, px), MARGIN.left);
        const b = Math.min(Math.max(dragStart, px), MARGIN.left + sc.pw);
        this.brush.setAttribute("x", a);
        this.brush.setAttribute("width", Math.max(b - a, 0));
        this.brush.setAttribute("visibility", "visible");
      }
      if (px >= MARGIN.left && px <= MARGIN.left + sc.pw) this.showCursor(sc.ix(px));
    });
    const finish = (e) => {
      if (dragStart === null) return;
      const px = this.localX(e);
      const sc = this.scales();
      const a = Math.min(dragStart, px);
      const b = Math.max(dragStart, px);
      dragStart = null;
      this.brush.setAttribute("visibility", "hidden");
      if (b - a > 6) this.zoom([sc.ix(a), sc.ix(b)]);
    };
    this.svg.addEventListener("pointerup", finish);
    this.svg.addEventListener("pointercancel", () => {
      dragStart = null;
      this.brush.setAttribute("visibility", "hidden");
    });
    this.svg.addEventListener("pointerleave", () => {
      if (dragStart === null) this.hideCursor();
    });
    this.svg.addEventListener("blur", () => this.hideCursor());
    this.svg.addEventListener("keydown", (e) => {
      const shown = this.visibleSeries();
      if (!shown.length) return;
      const xs = shown[0].x;
      const {d} = this.scales();
      let i = this.cursor === null ? bisect(xs, d.x0) : nearest(xs, this.cursor);
      const span = d.x1 - d.x0;
      const mid = this.cursor ?? (d.x0 + d.x1) / 2;
      if (e.key === "ArrowRight") i = Math.min(i + (this.cursor === null ? 0 : 1), xs.length - 1);
      else if (e.key === "ArrowLeft") i = Math.max(i - 1, 0);
      else if (e.key === "Home") i = bisect(xs, d.x0);
      else if (e.key === "End") i = bisect(xs, d.x1);
      else if (e.key === "+" || e.key === "=") return this.keyZoom(e, [mid - span / 4, mid + span / 4]);
      else if (e.key === "-" || e.key === "_") return this.keyZoom(e, [mid - span, mid + span]);
      else if (e.key === "0") return this.keyZoom(e, null);
      else return;
      e.preventDefault();
      this.showCursor(xs[i]);
    });
  }

  keyZoom(event, window) {
    event.preventDefault();
    this.zoom(window);
  }
}
