// Starting points for the case form: invented demonstration scenarios, not real structures.

export const EXAMPLES = {
  pipe: {
    label: "Pipe in a cooling duct (quick, transient)",
    spec: {
      title: "Pipe in a cooling duct (demo)",
      channel: {length: 1.0, height: 0.41, walls: "no-slip"},
      bodies: [{name: "pipe", shape: "circle", center: [0.2, 0.2], radius: 0.05}],
      fluid: {density: 1.0, viscosity: 0.001},
      inflow: {profile: "parabolic", peak_velocity: 0.3, ramp_time: 0.2},
      mesh: {preset: "coarse", scale: 2.0},
      analysis: {mode: "transient", scheme: "bdf2-imex", time_step: 0.01, end_time: 1.0, output_interval: 0.1},
    },
  },
  pier: {
    label: "Bridge pier in a river channel (steady)",
    spec: {
      title: "Bridge pier in a river channel (demo, steady)",
      channel: {length: 16.0, height: 6.0, walls: "slip"},
      bodies: [{name: "pier", shape: "rectangle", center: [4.0, 3.05], width: 1.6, height: 0.8, corner_radius: 0.25}],
      fluid: {density: 1000.0, reynolds: 40, reference: {length: 0.8}},
      inflow: {profile: "uniform", mean_velocity: 0.5},
      mesh: {preset: "coarse"},
      analysis: {mode: "steady"},
      probes: {pressure_drop: [[2.5, 3.05], [6.0, 3.05]]},
    },
  },
  tubes: {
    label: "Two tubes in tandem in a cooling duct (steady)",
    spec: {
      title: "Two tubes in tandem in a cooling duct (demo)",
      channel: {length: 1.2, height: 0.3, walls: "no-slip"},
      bodies: [
        {name: "upstream", shape: "circle", center: [0.25, 0.15], radius: 0.02},
        {name: "downstream", shape: "circle", center: [0.37, 0.15], radius: 0.02},
      ],
      fluid: {density: 1.2, viscosity: 1.5e-5},
      inflow: {profile: "parabolic", mean_velocity: 0.02},
      mesh: {preset: "coarse"},
      analysis: {mode: "steady"},
    },
  },
  vane: {
    label: "Guide vane in a duct (airfoil, transient)",
    spec: {
      title: "Guide vane in a ventilation duct (demo)",
      channel: {length: 2.0, height: 0.5, walls: "no-slip"},
      bodies: [{name: "vane", shape: "naca4", code: "2412", chord: 0.2, leading_edge: [0.4, 0.25], angle_of_attack: 8}],
      fluid: {density: 1.0, reynolds: 200},
      inflow: {profile: "parabolic", mean_velocity: 0.2, ramp_time: 0.5},
      mesh: {preset: "coarse"},
      analysis: {mode: "transient", scheme: "bdf2-imex", time_step: 0.005, end_time: 4.0, output_interval: 0.2},
    },
  },
};

/** Shape defaults placed in the channel when a body is added or its shape changes. */
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
