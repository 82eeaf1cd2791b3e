// The orbit of a body that moves in both directions: its displacement across the stream (dy) against its
// displacement along it (dx), on equal scales so a circle looks round. Drawn from forces.csv's <name>_dx and
// <name>_dy columns (the run's own samples); no dependencies.

import {PALETTE} from "./chart.js";
import {h, num, s} from "./util.js";

const SIZE = 320;
const PAD = 46;

/** The bodies of forces.csv that moved along both axes: [{owner, dx, dy}]. */
export function orbits(forces) {
  const byOwner = new Map();
  for (const c of forces.columns) {
    if (c.quantity === "dx" || c.quantity === "dy") (byOwner.get(c.owner) ?? byOwner.set(c.owner, {}).get(c.owner))[c.quantity] = c.values;
  }
  const moves = (v) => v && v.some((x) => x !== v[0]);
  return [...byOwner].filter(([, o]) => moves(o.dx) && moves(o.dy)).map(([owner, o]) => ({owner, dx: o.dx, dy: o.dy}));
}

/** A card with one orbit per body (null when no body moved in both directions). */
export function orbitCard(forces, owners) {
  const shown = orbits(forces);
  if (!shown.length) return null;
  const all = shown.flatMap((o) => [...o.dx, ...o.dy]).filter(Number.isFinite);
  const reach = Math.max(...all.map(Math.abs), 1e-300) * 1.08;
  const scale = (SIZE - 2 * PAD) / (2 * reach);
  const sx = (x) => PAD + (x + reach) * scale;
  const sy = (y) => SIZE - PAD - (y + reach) * scale;
  const svg = s("svg", {class: "orbit-svg", id: "orbit-chart", viewBox: `0 0 ${SIZE} ${SIZE}`, role: "img",
    "aria-label": `Orbit: displacement across the stream against displacement along it, for ${shown.map((o) => o.owner).join(", ")}`});
  const lo = PAD;
  const hi = SIZE - PAD;
  svg.append(
    s("rect", {x: lo, y: lo, width: hi - lo, height: hi - lo, class: "orbit-frame", fill: "none", stroke: "#999"}),
    s("line", {x1: sx(0), x2: sx(0), y1: lo, y2: hi, stroke: "#ccc"}),
    s("line", {x1: lo, x2: hi, y1: sy(0), y2: sy(0), stroke: "#ccc"}),
    s("text", {x: lo, y: hi + 16, "text-anchor": "start", class: "axis-label"}, num(-reach, 3)),
    s("text", {x: hi, y: hi + 16, "text-anchor": "end", class: "axis-label"}, num(reach, 3)),
    s("text", {x: SIZE / 2, y: SIZE - 8, "text-anchor": "middle", class: "axis-title"}, "dx [m] (along the stream)"),
    s("text", {x: lo - 6, y: lo + 4, "text-anchor": "end", class: "axis-label"}, num(reach, 3)),
    s("text", {x: lo - 6, y: hi, "text-anchor": "end", class: "axis-label"}, num(-reach, 3)),
    s("text", {x: 12, y: SIZE / 2, "text-anchor": "middle", class: "axis-title", transform: `rotate(-90 12 ${SIZE / 2})`},
      "dy [m] (across)"));
  for (const o of shown) {
    const colour = PALETTE[Math.max(owners.indexOf(o.owner), 0) % PALETTE.length];
    const points = o.dx.map((x, i) => `${sx(x).toFixed(2)},${sy(o.dy[i]).toFixed(2)}`).join(" ");
    svg.append(s("polyline", {points, fill: "none", stroke: colour, "stroke-width": 1.5, class: "orbit", dataset: {owner: o.owner}}));
  }
  return h("section", {class: "card chart-card orbit-card", "aria-labelledby": "orbit-heading"},
    h("h3", {id: "orbit-heading"}, "Orbit"),
    h("p", {class: "hint"}, "Where each body moving in both directions went: dy against dx, on equal scales."),
    h("div", {class: "orbit-host"}, svg),
    h("ul", {class: "orbit-legend"}, shown.map((o) => h("li", {},
      h("span", {class: "swatch", style: `background:${PALETTE[Math.max(owners.indexOf(o.owner), 0) % PALETTE.length]}`}), o.owner))));
}
