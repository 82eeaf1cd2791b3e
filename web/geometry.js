// Case geometry the browser needs at once, before the service's preview answers: body outlines for the
// drawing, the nominal velocity and the viscosity/Reynolds conversion of the fluid switch. Every figure
// shown (Reynolds number, blockage, mesh size, steps) comes from the preview (POST /api/v1/previews).

import {DEFAULTS} from "./defaults.js";

const finite = (v) => typeof v === "number" && Number.isFinite(v);

function rotate(points, angleDeg, [cx, cy]) {
  const a = (angleDeg * Math.PI) / 180;
  const c = Math.cos(a);
  const sn = Math.sin(a);
  return points.map(([x, y]) => [cx + (x - cx) * c - (y - cy) * sn, cy + (x - cx) * sn + (y - cy) * c]);
}

/** Four-digit airfoil surface (closed trailing edge), nose at the leading edge, turned by -alpha. */
function airfoil(body, n = 96) {
  const code = String(body.code ?? "");
  if (!/^\d{4}$/.test(code) || !finite(body.chord) || !Array.isArray(body.leading_edge)) return null;
  const m = Number(code[0]) / 100;
  const p = Number(code[1]) / 10;
  const t = Number(code.slice(2)) / 100;
  const upper = [];
  const lower = [];
  for (let i = 0; i <= n / 2; i++) {
    const x = (1 - Math.cos((Math.PI * i) / (n / 2))) / 2;
    const yt = 5 * t * (0.2969 * Math.sqrt(x) - 0.126 * x - 0.3516 * x ** 2 + 0.2843 * x ** 3 - 0.1036 * x ** 4);
    let yc = 0;
    let slope = 0;
    if (m > 0 && p > 0) {
      if (x < p) {
        yc = (m / p ** 2) * (2 * p * x - x ** 2);
        slope = ((2 * m) / p ** 2) * (p - x);
      } else {
        yc = (m / (1 - p) ** 2) * (1 - 2 * p + 2 * p * x - x ** 2);
        slope = ((2 * m) / (1 - p) ** 2) * (p - x);
      }
    }
    const th = Math.atan(slope);
    upper.push([x - yt * Math.sin(th), yc + yt * Math.cos(th)]);
    lower.push([x + yt * Math.sin(th), yc - yt * Math.cos(th)]);
  }
  const [lx, ly] = body.leading_edge;
  const pts = [...upper.reverse(), ...lower.slice(1, -1)].map(([x, y]) => [lx + x * body.chord, ly + y * body.chord]);
  return rotate(pts, -(body.angle_of_attack ?? 0), [lx, ly]);
}

/** Closed outline of a body as [[x, y], ...], or null when its fields are incomplete. */
export function outline(body, n = 96) {
  if (!body) return null;
  const c = body.center ?? (body.shape === "circle" ? DEFAULTS.circle.center : null);
  const okCenter = Array.isArray(c) && finite(c[0]) && finite(c[1]);
  switch (body.shape) {
    case "circle": {
      const r = body.radius ?? DEFAULTS.circle.radius;
      if (!okCenter || !finite(r) || r <= 0) return null;
      return Array.from({length: n}, (_, i) => [c[0] + r * Math.cos((2 * Math.PI * i) / n), c[1] + r * Math.sin((2 * Math.PI * i) / n)]);
    }
    case "ellipse": {
      if (!okCenter || !(body.width > 0) || !(body.height > 0)) return null;
      const pts = Array.from({length: n}, (_, i) => {
        const a = (2 * Math.PI * i) / n;
        return [c[0] + (body.width / 2) * Math.cos(a), c[1] + (body.height / 2) * Math.sin(a)];
      });
      return rotate(pts, body.angle ?? 0, c);
    }
    case "rectangle": {
      if (!okCenter || !(body.width > 0) || !(body.height > 0)) return null;
      const w = body.width / 2;
      const hh = body.height / 2;
      const r = Math.min(Math.max(body.corner_radius ?? 0, 0), 0.999 * Math.min(w, hh));
      const k = Math.max(Math.floor(n / 4), 2);
      const pts = [];
      [[w - r, hh - r], [-w + r, hh - r], [-w + r, -hh + r], [w - r, -hh + r]].forEach(([cx, cy], i) => {
        for (let j = 0; j < k; j++) {
          const a = ((i + j / (k - 1)) * Math.PI) / 2;
          pts.push([c[0] + cx + r * Math.cos(a), c[1] + cy + r * Math.sin(a)]);
        }
      });
      return rotate(pts, body.angle ?? 0, c);
    }
    case "naca4":
      return airfoil(body, n);
    case "polygon": {
      const pts = body.points;
      if (!Array.isArray(pts) || pts.length < 3 || !pts.every((p) => Array.isArray(p) && finite(p[0]) && finite(p[1]))) return null;
      return pts.map((p) => [p[0], p[1]]);
    }
    default:
      return null;
  }
}

export function bounds(points) {
  const xs = points.map((p) => p[0]);
  const ys = points.map((p) => p[1]);
  return {x0: Math.min(...xs), x1: Math.max(...xs), y0: Math.min(...ys), y1: Math.max(...ys)};
}

/** The length that makes cD, cL and Re: diameter, chord, otherwise the frontal height. */
export function referenceLength(body) {
  if (body?.shape === "circle") return 2 * (body.radius ?? DEFAULTS.circle.radius);
  if (body?.shape === "naca4") return body.chord;
  const pts = outline(body);
  return pts ? bounds(pts).y1 - bounds(pts).y0 : null;
}

export function channelOf(spec) {
  const ch = spec.channel ?? {};
  const d = DEFAULTS.channel;
  return {length: ch.length ?? d.length, height: ch.height ?? d.height, walls: ch.walls ?? d.walls};
}

/** Mean inflow velocity times the time law's nominal factor (as the solver scales its coefficients). */
export function nominalVelocity(spec) {
  const inflow = spec.inflow ?? {};
  const profile = inflow.profile ?? "parabolic";
  let peak = inflow.peak_velocity;
  if (peak === undefined || peak === null) {
    peak = inflow.mean_velocity !== undefined && inflow.mean_velocity !== null
      ? inflow.mean_velocity * (profile === "parabolic" ? 1.5 : 1) : DEFAULTS.inflow.peak_velocity;
  }
  const mean = peak * (profile === "parabolic" ? 2 / 3 : 1);
  const law = inflow.time_law ?? {};
  let nominal = 1;
  if (law.kind === "sine") nominal = Math.abs(law.mean ?? 0) + Math.abs(law.amplitude ?? 1);
  if (law.kind === "table" && Array.isArray(law.points) && law.points.length) {
    nominal = Math.max(...law.points.map((p) => Math.abs(p[1])));
  }
  return mean * nominal;
}

/** Reynolds number and the kinematic viscosity the run will use (null when undetermined). */
export function reynolds(spec) {
  const fluid = spec.fluid ?? {};
  const ref = fluid.reference ?? {};
  const U = ref.velocity ?? nominalVelocity(spec);
  const L = ref.length ?? (spec.bodies?.length ? referenceLength(spec.bodies[0]) : channelOf(spec).height);
  if (!(finite(U) && U > 0 && finite(L) && L > 0)) return {re: null, nu: null, U, L};
  if (fluid.reynolds !== undefined && fluid.reynolds !== null) {
    return finite(fluid.reynolds) && fluid.reynolds > 0 ? {re: fluid.reynolds, nu: (U * L) / fluid.reynolds, U, L} : {re: null, nu: null, U, L};
  }
  if (fluid.viscosity !== undefined && fluid.viscosity !== null && !(finite(fluid.viscosity) && fluid.viscosity > 0)) {
    return {re: null, nu: null, U, L};
  }
  const nu = fluid.viscosity ?? DEFAULTS.fluid.viscosity;
  return {re: (U * L) / nu, nu, U, L};
}

/** Local checks shown on the drawing (the service repeats them and has the last word). */
export function geometryWarnings(spec) {
  const {length: L, height: H} = channelOf(spec);
  const warnings = [];
  (spec.bodies ?? []).forEach((b, i) => {
    const pts = outline(b);
    if (!pts) return;
    const bb = bounds(pts);
    if (bb.x0 <= 0 || bb.y0 <= 0 || bb.x1 >= L || bb.y1 >= H) {
      warnings.push({index: i, message: `Body ${i + 1} reaches outside the channel.`});
    }
  });
  return warnings;
}
