// The job spec's defaults as the solver has them (solver/spec.py), for placeholders and drawings (the figures come from the service):
// a 100 mm wide laboratory channel of water at 20 °C moving at 1 mm/s, with a 20 mm post in it (Re ≈ 20).

export const ADAPTIVE = "bdf2-adaptive"; // the default time stepping: error-controlled, no time step to pick

export const DEFAULTS = {
  channel: {length: 0.4, height: 0.1, walls: "no-slip"},
  fluid: {density: 998.2, viscosity: 1.004e-6},
  inflow: {peak_velocity: 0.0015},
  circle: {center: [0.1, 0.05], radius: 0.01},
  analysis: {newton_tolerance: 1e-8, accuracy: 1e-3},
};
