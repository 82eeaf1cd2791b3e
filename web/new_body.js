// Where the form puts a body that is added or given another shape: a size and place in the channel the person
// then edits (the page's own choice, not a spec default; the service draws and checks the result).

/** A body of ``shape`` placed in ``channel`` ({length, height}) as the ``index``-th. */
export function newBody(shape, channel, index) {
  const L = channel.length;
  const H = channel.height;
  const d = Math.min(H / 6, L / 10);
  const cx = Number((L * (0.2 + 0.12 * index)).toPrecision(3));
  const cy = Number((H / 2).toPrecision(3));
  const r = (v) => Number(v.toPrecision(3));
  const name = `body${index + 1}`;
  switch (shape) {
    case "rectangle":
      return {name, shape, center: [cx, cy], width: r(d), height: r(d), angle: 0, corner_radius: 0};
    case "ellipse":
      return {name, shape, center: [cx, cy], width: r(2 * d), height: r(d), angle: 0};
    case "naca4":
      return {name, shape, code: "0012", chord: r(2 * d), leading_edge: [r(cx - d), cy], angle_of_attack: 5};
    case "polygon":
      return {name, shape, points: [[r(cx - d / 2), r(cy - d / 2)], [r(cx + d / 2), cy], [r(cx - d / 2), r(cy + d / 2)]]};
    default:
      return {name, shape: "circle", center: [cx, cy], radius: r(d / 2)};
  }
}
