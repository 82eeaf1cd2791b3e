// To-scale SVG drawing of the channel, the inflow profile, the bodies and the probes.
// Bodies can be dragged with a pointer, or focused and moved with the arrow keys. The body outlines are the
// solver's (the service's preview); the drawing computes no shape of its own.

import {num, s} from "./util.js";

function bounds(points) {
  const xs = points.map((p) => p[0]);
  const ys = points.map((p) => p[1]);
  return {x0: Math.min(...xs), x1: Math.max(...xs), y0: Math.min(...ys), y1: Math.max(...ys)};
}

const PAD = {left: 44, right: 16, top: 22, bottom: 30};

/** Move a body by (dx, dy) in metres, whatever its shape; returns the body (changed in place). */
export function translateBody(body, dx, dy) {
  const r = (v) => Number(v.toPrecision(6));
  const shift = (p) => [r(p[0] + dx), r(p[1] + dy)];
  if (body.shape === "naca4" && Array.isArray(body.leading_edge)) body.leading_edge = shift(body.leading_edge);
  else if (body.shape === "polygon" && Array.isArray(body.points)) body.points = body.points.map(shift);
  else body.center = shift(body.center ?? [0.2, 0.2]);
  return body;
}

export class CaseDrawing {
  /** onMove(index, dx, dy) is called when a person drags or nudges body number index. */
  constructor(host, {onMove}) {
    this.host = host;
    this.onMove = onMove;
    this.svg = s("svg", {class: "case-svg", role: "group", "aria-label": "Drawing of the channel and bodies, to scale"});
    this.bodyLayer = s("g", {class: "bodies"});
    host.append(this.svg);
    this.width = 600;
    this.spec = {};
    this.warned = new Set();
    this.scene = {channel: {}, profile: "parabolic", outlines: []};
    new ResizeObserver(() => {
      const w = Math.round(host.clientWidth);
      if (w > 0 && Math.abs(w - this.width) > 1) {
        this.width = w;
        this.draw(this.spec, this.warned, this.scene);
      }
    }).observe(host);
  }

  /** Draw ``spec`` in ``scene``: its channel {length, height, walls} and inflow ``profile`` (the spec's values or
   * the service's defaults for them) and ``outlines``, one closed [[x, y], ...] per body (null: not drawn). */
  draw(spec, warned = new Set(), scene = this.scene) {
    this.spec = spec;
    this.warned = warned;
    this.scene = scene;
    const {length: L, height: H, walls} = scene.channel;
    if (!(L > 0 && H > 0)) {
      this.svg.replaceChildren(s("text", {x: 10, y: 20}, "Give the channel a length and a height."));
      return;
    }
    const pw = Math.max(this.width - PAD.left - PAD.right, 50);
    const k = Math.min(pw / L, 380 / H); // pixels per metre, same on both axes
    const ph = H * k;
    const width = PAD.left + L * k + PAD.right;
    const height = PAD.top + ph + PAD.bottom;
    this.k = k;
    const X = (x) => PAD.left + x * k;
    const Y = (y) => PAD.top + (H - y) * k;
    const svg = this.svg;
    svg.setAttribute("viewBox", `0 0 ${width} ${height}`);
    svg.setAttribute("width", width);
    svg.setAttribute("height", height);
    const parts = [];
    parts.push(s("rect", {class: "fluid-area", x: X(0), y: Y(H), width: L * k, height: ph}));
    const wallClass = walls === "slip" ? "wall wall-slip" : "wall";
    parts.push(s("line", {class: wallClass, x1: X(0), x2: X(L), y1: Y(0), y2: Y(0)}));
    parts.push(s("line", {class: wallClass, x1: X(0), x2: X(L), y1: Y(H), y2: Y(H)}));
    parts.push(s("line", {class: "open-end", x1: X(L), x2: X(L), y1: Y(0), y2: Y(H)}));
    // inflow profile arrows
    const profile = scene.profile;
    const arrowMax = Math.min(PAD.left - 8, 36);
    const arrows = s("g", {class: "inflow", "aria-hidden": "true"});
    const n = 9;
    const curve = [];
    for (let i = 0; i <= 40; i++) {
      const y = (H * i) / 40;
      const f = profile === "uniform" ? 1 : (4 * y * (H - y)) / H ** 2;
      curve.push(`${i ? "L" : "M"}${(X(0) - 4 - arrowMax + f * arrowMax).toFixed(1)},${Y(y).toFixed(1)}`);
    }
    arrows.append(s("path", {d: curve.join(""), class: "profile"}));
    for (let i = 1; i < n; i++) {
      const y = (H * i) / n;
      const f = profile === "uniform" ? 1 : (4 * y * (H - y)) / H ** 2;
      const x0 = X(0) - 4 - arrowMax;
      const x1 = x0 + f * arrowMax;
      if (x1 - x0 < 3) continue;
      arrows.append(s("line", {x1: x0, x2: x1, y1: Y(y), y2: Y(y)}),
        s("path", {d: `M${x1},${Y(y)} l-5,-3 v6 z`, class: "head"}));
    }
    parts.push(arrows);
    // dimensions
    parts.push(s("text", {class: "dim", x: X(L / 2), y: Y(0) + 20, "text-anchor": "middle"}, `length ${num(L)} m`));
    parts.push(s("text", {class: "dim", x: X(L) - 4, y: Y(H) - 7, "text-anchor": "end"}, `height ${num(H)} m · ${walls === "slip" ? "slip walls" : "no-slip walls"}`));
    parts.push(s("text", {class: "dim", x: X(0), y: Y(H) - 7}, "inflow →"));
    // bodies: their elements are kept from one drawing to the next, so focus and a drag in progress survive
    const bodies = spec.bodies ?? [];
    while (this.bodyLayer.children.length > bodies.length) this.bodyLayer.lastElementChild.remove();
    bodies.forEach((body, index) => {
      let g = this.bodyLayer.children[index];
      if (!g) {
        g = s("g", {tabindex: "0", role: "button", dataset: {index}}, s("path", {}),
          s("text", {"text-anchor": "middle", class: "body-label"}));
        this.bindBody(g, index);
        this.bodyLayer.append(g);
      }
      const pts = scene.outlines[index];
      g.style.display = pts ? "" : "none";
      if (!pts) return;
      const d = pts.map(([x, y], i) => `${i ? "L" : "M"}${X(x).toFixed(2)},${Y(y).toFixed(2)}`).join("") + "Z";
      const bb = bounds(pts);
      const name = body.name || `body${index + 1}`;
      g.setAttribute("class", `body${warned.has(index) ? " body-warn" : ""}${g === this.dragged ? " dragging" : ""}`);
      g.setAttribute("aria-label", `${name}, ${body.shape}, at x ${num((bb.x0 + bb.x1) / 2, 3)} m, ` +
        `y ${num((bb.y0 + bb.y1) / 2, 3)} m. Arrow keys move it; with Shift in larger steps.`);
      g.firstElementChild.setAttribute("d", d);
      const label = g.lastElementChild;
      label.setAttribute("x", X((bb.x0 + bb.x1) / 2));
      label.setAttribute("y", Y(bb.y1) - 5);
      label.textContent = name;
    });
    parts.push(this.bodyLayer);
    // probes
    const pd = spec.probes?.pressure_drop;
    if (Array.isArray(pd)) {
      pd.forEach((p, i) => {
        if (!Array.isArray(p) || !Number.isFinite(p[0]) || !Number.isFinite(p[1])) return;
        parts.push(s("g", {class: "probe"}, s("circle", {cx: X(p[0]), cy: Y(p[1]), r: 4}),
          s("text", {x: X(p[0]) + 6, y: Y(p[1]) - 6}, i === 0 ? "p(a)" : "p(b)")));
      });
    }
    for (const p of spec.probes?.velocity ?? []) {
      if (Array.isArray(p) && Number.isFinite(p[0]) && Number.isFinite(p[1])) {
        parts.push(s("g", {class: "probe probe-velocity"}, s("rect", {x: X(p[0]) - 3, y: Y(p[1]) - 3, width: 6, height: 6})));
      }
    }
    // a scale bar
    const bar = niceLength(L / 5);
    parts.push(s("g", {class: "scale-bar", "aria-hidden": "true"},
      s("line", {x1: X(0), x2: X(0) + bar * k, y1: Y(0) + 14, y2: Y(0) + 14}),
      s("text", {x: X(0) + bar * k + 4, y: Y(0) + 18}, `${num(bar)} m`)));
    // swap everything but the body layer (moving a focused element would drop its focus)
    for (const child of [...svg.children]) if (child !== this.bodyLayer) child.remove();
    if (this.bodyLayer.parentNode !== svg) svg.append(this.bodyLayer);
    const at = parts.indexOf(this.bodyLayer);
    svg.prepend(...parts.slice(0, at));
    svg.append(...parts.slice(at + 1));
  }

  bindBody(g, index) {
    let start = null;
    g.addEventListener("pointerdown", (e) => {
      start = {x: e.clientX, y: e.clientY};
      g.setPointerCapture(e.pointerId);
      g.classList.add("dragging");
      this.dragged = g;
      g.focus({preventScroll: true});
      e.preventDefault();
    });
    g.addEventListener("pointermove", (e) => {
      if (!start) return;
      const scale = this.svg.getBoundingClientRect().width / Number(this.svg.getAttribute("width"));
      const dx = (e.clientX - start.x) / scale / this.k;
      const dy = -(e.clientY - start.y) / scale / this.k;
      if (Math.abs(dx) + Math.abs(dy) < 1e-12) return;
      start = {x: e.clientX, y: e.clientY};
      this.onMove(index, dx, dy);
    });
    const end = () => {
      start = null;
      this.dragged = null;
      g.classList.remove("dragging");
    };
    g.addEventListener("pointerup", end);
    g.addEventListener("pointercancel", end);
    g.addEventListener("keydown", (e) => {
      const step = niceLength(this.scene.channel.height / (e.shiftKey ? 10 : 100));
      const moves = {ArrowLeft: [-step, 0], ArrowRight: [step, 0], ArrowUp: [0, step], ArrowDown: [0, -step]};
      const m = moves[e.key];
      if (!m) return;
      e.preventDefault();
      this.onMove(index, ...m);
    });
  }
}

function niceLength(x) {
  const mag = 10 ** Math.floor(Math.log10(x));
  const n = x / mag;
  return (n < 1.5 ? 1 : n < 3.5 ? 2 : n < 7.5 ? 5 : 10) * mag;
}
