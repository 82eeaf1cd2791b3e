// Studies: a new study built on the New-case form's case (study_form.js), the list of parameter studies, and one
// study's points, plots and grid convergence.

import {ACTIVE, api} from "./api.js";
import {caution} from "./results.js";
import {fill, h, num, shortId, toast, when} from "./util.js";

export class StudiesView {
  constructor(root, {builder}) {
    this.root = root;
    this.builder = builder;
    this.timer = null;
    this.plotUrl = null;
  }

  hide() {
    clearTimeout(this.timer);
  }

  async show(id) {
    clearTimeout(this.timer);
    try {
      if (id) await this.showStudy(id);
      else await this.showList();
    } catch (err) {
      fill(this.root, h("h2", {}, "Studies"), h("p", {class: "error"}, err.message));
    }
  }

  async showList() {
    this.builder.refresh();
    const {studies} = await api.listStudies();
    const rows = studies.map((s) => h("tr", {},
      h("td", {}, h("a", {href: `#/studies/${s.id}`}, s.title || shortId(s.id))),
      h("td", {}, s.kind), h("td", {}, (s.varied ?? []).join(", ")),
      h("td", {}, h("span", {class: `state state-${s.state}`}, s.state)),
      h("td", {}, `${Math.round(100 * s.progress)} %`), h("td", {}, String(s.points_count)),
      h("td", {}, s.owner), h("td", {}, when(s.created_at))));
    fill(this.root,
      h("h2", {}, "Studies"),
      this.builder.el,
      h("p", {class: "hint"}, "Each point of a study is an ordinary job in the queue. Scripts submit studies with " +
        "POST /api/v1/studies or `wakeyard study`."),
      studies.length ? h("table", {class: "table studies-table"},
        h("thead", {}, h("tr", {}, ...["Study", "Kind", "Varied", "State", "Progress", "Points", "Owner",
          "Submitted"].map((t) => h("th", {scope: "col"}, t)))),
        h("tbody", {}, ...rows)) : h("p", {}, "No studies yet."));
  }

  async showStudy(id) {
    const study = await api.getStudy(id);
    const varied = study.varied ?? Object.keys(study.points[0]?.values ?? {});
    const keys = [...new Set(study.points.flatMap((p) => Object.keys(p.summary ?? {})))];
    // "name [unit]" as the service writes its table headers; "[-]" for dimension one
    const label = (k) => (study.units?.[k] === undefined ? k : `${k} [${study.units[k] === "1" ? "-" : study.units[k]}]`);
    const table = h("table", {class: "table study-points"},
      h("thead", {}, h("tr", {}, ...[...varied.map(label), "State", "Job", ...keys.map(label)].map((t) => h("th", {scope: "col"}, t)))),
      h("tbody", {}, ...study.points.map((p) => h("tr", {},
        ...varied.map((v) => h("td", {}, num(p.values?.[v]))),
        h("td", {}, h("span", {class: `state state-${p.state}`}, p.state)),
        h("td", {}, h("a", {href: `#/jobs/${p.job}`}, shortId(p.job))),
        ...keys.map((k) => h("td", {}, p.summary && k in p.summary ? num(p.summary[k]) : "—"))))));
    const plot = h("img", {class: "study-plot", alt: "summary value against the varied field"});
    const choice = h("select", {id: "study-y", "aria-label": "Value to plot"},
      ...keys.map((k) => h("option", {value: k}, label(k))));
    const drawPlot = async () => {
      if (!choice.value || study.kind !== "sweep") return;
      try {
        const blob = await api.studyBlob(id, "plot.png", {y: choice.value});
        if (this.plotUrl) URL.revokeObjectURL(this.plotUrl);
        this.plotUrl = URL.createObjectURL(blob);
        plot.src = this.plotUrl;
      } catch (err) {
        toast(err.message, "error");
      }
    };
    choice.addEventListener("change", drawPlot);
    const download = h("button", {type: "button"}, "Download table (CSV)");
    download.addEventListener("click", async () => {
      const blob = await api.studyBlob(id, "table.csv");
      const a = h("a", {href: URL.createObjectURL(blob), download: `study-${shortId(id)}.csv`});
      a.click();
    });
    const cancel = h("button", {type: "button", class: "btn-danger"}, "Cancel study");
    cancel.hidden = !ACTIVE.has(study.state);
    cancel.addEventListener("click", async () => {
      if (!window.confirm(`Cancel the study “${study.title || shortId(id)}”? Its queued points will not run.`)) return;
      try {
        await api.cancelStudy(id);
        this.show(id);
      } catch (err) {
        toast(err.message, "error");
      }
    });
    const parts = [
      h("p", {}, h("a", {href: "#/studies"}, "← Studies")),
      h("h2", {}, study.title || `Study ${shortId(id)}`),
      h("p", {}, `${study.kind} · `, h("span", {class: `state state-${study.state}`}, study.state),
        ` · ${Math.round(100 * study.progress)} % · owner ${study.owner}`),
      caution(study.caution),
      h("div", {class: "actions"}, download, cancel),
      h("section", {class: "card"}, h("h3", {}, "Points"), table),
    ];
    if (study.kind === "sweep" && keys.length) {
      parts.push(h("section", {class: "card"}, h("h3", {}, "Plot"),
        h("label", {for: "study-y"}, "Value "), choice, plot));
    }
    if (study.convergence && Object.keys(study.convergence).length) {
      parts.push(h("section", {class: "card"}, h("h3", {}, "Grid convergence (three finest meshes)"),
        h("table", {class: "table study-convergence"},
          h("thead", {}, h("tr", {}, ...["Value", "Observed order", "Extrapolated", "GCI (fine)", "Monotone"]
            .map((t) => h("th", {scope: "col"}, t)))),
          h("tbody", {}, ...Object.entries(study.convergence).map(([k, c]) => h("tr", {},
            h("td", {}, k), h("td", {}, num(c.observed_order, 3)), h("td", {}, num(c.extrapolated, 6)),
            h("td", {}, c.gci_fine == null ? "—" : `${num(100 * c.gci_fine, 3)} %`),
            h("td", {}, c.monotone ? "yes" : "no")))))));
    }
    fill(this.root, ...parts);
    drawPlot();
    if (ACTIVE.has(study.state)) this.timer = setTimeout(() => this.show(id), 2000);
  }
}
