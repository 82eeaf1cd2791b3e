// Starting points for the case form: invented demonstration scenarios with real fluid properties and sizes,
// small and slow enough to stay laminar (Re ≤ 200). None is a full-size structure: real piers, cables and
// vanes in rivers and ducts meet Reynolds numbers of 1e4 to 1e7 and turbulent flow, which wakeyard does not model.
// Water at 20 °C: 998.2 kg/m³, 1.004e-6 m²/s; at 15 °C: 999.1 kg/m³, 1.139e-6 m²/s; air at 20 °C and 1 atm:
// 1.204 kg/m³, 1.516e-5 m²/s (property tables, common knowledge).

export const EXAMPLES = {
  post: {
    label: "20 mm post in a slow water channel, Re 20 (quick, transient)",
    spec: {
      title: "20 mm post in a laboratory water channel, 20 °C, 1 mm/s (demo)",
      channel: {length: 0.4, height: 0.1, walls: "no-slip"},
      bodies: [{name: "post", shape: "circle", center: [0.1, 0.05], radius: 0.01}],
      fluid: {density: 998.2, viscosity: 1.004e-6},
      inflow: {profile: "parabolic", peak_velocity: 0.0015, ramp_time: 8},
      mesh: {preset: "coarse", scale: 2.0},
      analysis: {mode: "transient", end_time: 40, output_interval: 4},
    },
  },
  pier: {
    label: "Scale-model pier in a laboratory flume, Re 40 (steady)",
    spec: {
      title: "Scale-model pier in a laboratory flume, water at 15 °C, Re 40 (demo, steady)",
      channel: {length: 0.4, height: 0.15, walls: "slip"},
      bodies: [{name: "pier", shape: "rectangle", center: [0.1, 0.07625], width: 0.04, height: 0.02, corner_radius: 0.00625}],
      fluid: {density: 999.1, viscosity: 1.139e-6},
      inflow: {profile: "uniform", mean_velocity: 0.0023},
      mesh: {preset: "coarse"},
      analysis: {mode: "steady"},
      probes: {pressure_drop: [[0.0625, 0.07625], [0.15, 0.07625]]},
    },
  },
  rods: {
    label: "Two 2 mm rods in tandem in an air channel, Re 40 (steady)",
    spec: {
      title: "Two 2 mm rods in tandem in a small air channel at 20 °C, Re 40 (demo, steady)",
      channel: {length: 0.06, height: 0.015, walls: "no-slip"},
      bodies: [
        {name: "upstream", shape: "circle", center: [0.0125, 0.0075], radius: 0.001},
        {name: "downstream", shape: "circle", center: [0.0185, 0.0075], radius: 0.001},
      ],
      fluid: {density: 1.204, viscosity: 1.516e-5},
      inflow: {profile: "parabolic", mean_velocity: 0.3},
      mesh: {preset: "coarse"},
      analysis: {mode: "steady"},
    },
  },
  vane: {
    label: "Guide-vane model in an air channel, Re 200 (airfoil, transient)",
    spec: {
      title: "20 mm guide-vane model in a small air channel at 20 °C, Re 200 (demo)",
      channel: {length: 0.2, height: 0.05, walls: "no-slip"},
      bodies: [{name: "vane", shape: "naca4", code: "2412", chord: 0.02, leading_edge: [0.04, 0.025], angle_of_attack: 8}],
      fluid: {density: 1.204, viscosity: 1.516e-5},
      inflow: {profile: "parabolic", mean_velocity: 0.15, ramp_time: 0.067},
      mesh: {preset: "coarse"},
      analysis: {mode: "transient", end_time: 0.54, output_interval: 0.027},
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
