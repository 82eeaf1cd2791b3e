// The lift spectrum of a finished transient job, computed by the service (GET /jobs/{id}/spectrum): the page only
// draws it and names the shedding peak.

import {api} from "./api.js";
import {LineChart, PALETTE} from "./chart.js";
import {h, num} from "./util.js";

export async function spectrumCard(jobId) {
  const card = h("section", {class: "card chart-card", id: "spectrum-card", "aria-labelledby": "spectrum-heading"},
    h("h3", {id: "spectrum-heading"}, "Lift spectrum"));
  let answer;
  try {
    answer = await api.spectrum(jobId);
  } catch (err) {
    card.append(h("p", {class: "message"}, err.message));
    return card;
  }
  const bodies = answer.bodies.filter((b) => b.spectrum);
  if (!bodies.length) {
    card.append(h("p", {class: "hint"}, "The force history is too short for a spectrum."));
    return card;
  }
  card.append(h("p", {class: "hint"}, "Amplitude of the lift coefficient over the last half of the run, per frequency."),
    h("ul", {class: "peaks"}, bodies.map(({name, spectrum: s}) => {
      const cycles = s.from_cycles.strouhal_number;
      const finer = cycles !== null ? `; from whole lift cycles St = ${num(cycles, 4)}` : "; too few whole lift cycles for a finer figure";
      if (!s.peak) return h("li", {dataset: {body: name}}, `${name}: no shedding peak (the lift does not oscillate twice over the window)`, finer);
      return h("li", {dataset: {body: name}}, `${name}: shedding peak at f = ${num(s.peak.frequency, 4)} Hz, `,
        h("strong", {}, `St = ${num(s.peak.strouhal_number, 3)}`), ` (± ${num(s.resolution, 2)} Hz, one frequency bin)`, finer);
    })));
  const host = h("div", {class: "chart-host", id: "spectrum-chart"});
  card.append(host);
  const chart = new LineChart(host, {label: "Lift spectrum", xLabel: "frequency f [Hz]", yLabel: "cL amplitude"});
  chart.setSeries(bodies.map(({name, spectrum: s}, i) => ({id: name, label: `${name} cL`, x: s.frequency, y: s.amplitude,
    color: PALETTE[i % PALETTE.length]})));
  return card;
}
