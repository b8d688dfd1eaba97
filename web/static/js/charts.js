/* liftmatch charts: draw every chart whose data block is on the page (also after an htmx swap). */
(function () {
  "use strict";
  const PALETTE = ["#0f6e78", "#8a5a00", "#4b3f8f", "#2f6f3e", "#9c3d54", "#3d5a80", "#6b7280", "#b45f06"];
  const charts = {};

  function draw(id, config) {
    const canvas = document.getElementById(id);
    if (!canvas || !window.Chart) return;
    if (charts[id]) charts[id].destroy();
    config.options = Object.assign({ animation: false, responsive: true, maintainAspectRatio: false }, config.options || {});
    charts[id] = new window.Chart(canvas, config);
  }

  function predictCharts() {
    const node = document.getElementById("predict-chart-data");
    if (!node) return;
    const data = JSON.parse(node.textContent || "null");
    if (!data) return;
    const curve = data.curve;
    const xy = (ys) => curve.thrust_n.map((x, i) => ({ x: x, y: ys[i] }));
    draw("chart-curves", {
      type: "scatter",
      data: { datasets: [
        { label: "electrical power [W]", data: xy(curve.electrical_power_w), showLine: true, pointRadius: 0, borderColor: PALETTE[0], yAxisID: "power" },
        { label: "specific thrust [g/W]", data: xy(curve.specific_thrust_g_per_w), showLine: true, pointRadius: 0, borderColor: PALETTE[1], borderDash: [6, 3], yAxisID: "gw" },
        { label: "requested points", data: data.points.map((p) => ({ x: p.thrust_n, y: p.electrical_power_w })), pointStyle: "rectRot", pointRadius: 7, backgroundColor: PALETTE[2], yAxisID: "power" },
        // 80 % band of each requested point's electrical power: one vertical bar per point, one legend entry
        ...data.points.filter((p) => p.electrical_power_w_band).map((p, i) => ({
          label: "80 % band of power", data: [{ x: p.thrust_n, y: p.electrical_power_w_band[0] }, { x: p.thrust_n, y: p.electrical_power_w_band[1] }],
          showLine: true, pointRadius: 3, pointStyle: "line", borderColor: PALETTE[2], borderWidth: 2, yAxisID: "power",
          hiddenInLegend: i > 0 })),
      ] },
      options: { plugins: { legend: { labels: { filter: (item, chart) => !chart.datasets[item.datasetIndex].hiddenInLegend } } },
        scales: {
        x: { title: { display: true, text: "thrust per rotor [N]" } },
        power: { position: "left", title: { display: true, text: "electrical power [W]" } },
        gw: { position: "right", title: { display: true, text: "specific thrust [g/W]" }, grid: { drawOnChartArea: false } },
      } },
    });
    // The loss terms and their labels come from the server (physics.operating_point.LOSS_TERMS): one list.
    draw("chart-losses", {
      type: "bar",
      data: { labels: data.losses.map((l) => l.label), datasets: data.loss_terms.map((t, i) => ({
        label: t.label + " [W]", data: data.losses.map((l) => l[t.name]), backgroundColor: PALETTE[i % PALETTE.length] })) },
      options: { scales: { x: { stacked: true }, y: { stacked: true, title: { display: true, text: "loss per rotor [W]" } } } },
    });
    windingChart(data);
  }

  function windingChart(data) {
    const w = data.winding;
    if (!w) return;
    const line = (ys) => w.t_s.map((t, i) => ({ x: t, y: ys[i] }));
    draw("chart-winding", {
      type: "scatter",
      data: { datasets: [
        { label: "winding temperature [°C]", data: line(w.temperature_c), showLine: true, pointRadius: 0, borderColor: PALETTE[4] },
        { label: "highest allowed [°C]", data: [{ x: 0, y: w.limit_c }, { x: w.t_s[w.t_s.length - 1], y: w.limit_c }], showLine: true, pointRadius: 0, borderColor: PALETTE[6], borderDash: [6, 3] },
        { label: "air [°C]", data: [{ x: 0, y: w.air_c }, { x: w.t_s[w.t_s.length - 1], y: w.air_c }], showLine: true, pointRadius: 0, borderColor: PALETTE[5], borderDash: [2, 3] },
      ] },
      options: { scales: { x: { title: { display: true, text: "time at full throttle [s]" } },
        y: { title: { display: true, text: "temperature [°C]" } } } },
    });
  }

  function requiredLine(x, ys, axis) {
    const finite = ys.filter((y) => Number.isFinite(y));
    const lo = Math.min.apply(null, finite), hi = Math.max.apply(null, finite);
    return { label: "required thrust", data: [{ x: x, y: lo }, { x: x, y: hi }], showLine: true, pointRadius: 0,
             borderColor: "#1d2430", borderDash: [4, 4], borderWidth: 1.5, yAxisID: axis };
  }

  function compareCharts() {
    const node = document.getElementById("compare-chart-data");
    if (!node) return;
    const data = JSON.parse(node.textContent || "null");
    if (!data || !data.series.length) return;
    const required = data.required_thrust_n[0];
    function build(id, key, yLabel, markFull) {
      const sets = [];
      const all = [];
      data.series.forEach((s, i) => {
        const colour = PALETTE[i % PALETTE.length];
        const pts = s.curves.thrust_n.map((x, j) => ({ x: x, y: s.curves[key][j] }));
        pts.forEach((p) => all.push(p.y));
        sets.push({ label: s.label, data: pts, showLine: true, pointRadius: 0, borderColor: colour, backgroundColor: colour });
        sets.push({ label: s.label + " (cruise)", data: [{ x: s.cruise.thrust_n, y: s.cruise[key] }], pointRadius: 6, pointStyle: "circle", backgroundColor: colour, borderColor: colour });
        if (markFull) {
          const last = pts[pts.length - 1];
          if (last) sets.push({ label: s.label + " (full throttle)", data: [last], pointRadius: 7, pointStyle: "triangle", backgroundColor: colour, borderColor: colour });
        }
      });
      sets.push(requiredLine(required, all, "y"));
      draw(id, { type: "scatter", data: { datasets: sets }, options: {
        plugins: { legend: { labels: { filter: (item) => !/\((cruise|full throttle)\)$/.test(item.text) } } },
        scales: { x: { title: { display: true, text: "thrust per rotor [N]" } }, y: { title: { display: true, text: yLabel } } } } });
    }
    build("chart-power", "electrical_power_w", "electrical power per rotor [W]", true);
    build("chart-gw", "specific_thrust_g_per_w", "specific thrust [g/W]", false);
    draw("chart-discharge", { type: "scatter", data: { datasets: data.series.map((s, i) => ({
      label: s.label, showLine: true, pointRadius: 0, borderColor: PALETTE[i % PALETTE.length],
      data: s.curves.discharge_time_min.map((t, j) => ({ x: t, y: s.curves.discharge_bus_voltage_v[j] })) })) },
      options: { scales: { x: { title: { display: true, text: "time [min]" } }, y: { title: { display: true, text: "bus voltage [V]" } } } } });
  }

  const PARETO_AXES = {
    endurance_min: { label: "endurance [min]", better: 1 },
    thrust_to_weight: { label: "thrust-to-weight at full throttle", better: 1 },
    all_up_mass_g: { label: "all-up mass [g]", better: -1 },
    cost: { label: "cost", better: -1 },
  };

  function dominatedOnTwo(points, x, y) {
    // Is another point at least as good on both shown axes and better on one (better = larger × direction)?
    const bx = PARETO_AXES[x].better, by = PARETO_AXES[y].better;
    return points.map((p) => points.some((q) => q !== p && q[x] !== null && q[y] !== null && p[x] !== null && p[y] !== null &&
      bx * q[x] >= bx * p[x] && by * q[y] >= by * p[y] && (bx * q[x] > bx * p[x] || by * q[y] > by * p[y])));
  }

  function paretoChart() {
    const node = document.getElementById("pareto-chart-data");
    if (!node) return;
    const data = JSON.parse(node.textContent || "{}");
    const points = data.points || [];
    const xSel = document.getElementById("pareto-x"), ySel = document.getElementById("pareto-y");
    const x = xSel ? xSel.value : "thrust_to_weight", y = ySel ? ySel.value : "endurance_min";
    const hollow = dominatedOnTwo(points, x, y);
    const cells = [...new Set(points.map((p) => p.cells))].sort((a, b) => a - b);
    const sets = [];
    cells.forEach((c, i) => {
      const colour = PALETTE[i % PALETTE.length];
      [false, true].forEach((kept) => {
        const pts = points.map((p, j) => ({ p: p, j: j })).filter((o) => o.p.cells === c && hollow[o.j] === kept)
          .map((o) => ({ x: o.p[x], y: o.p[y], point: o.p }));
        if (pts.length) sets.push({ label: c + "S packs" + (kept ? " (kept by the other two)" : ""), data: pts, pointRadius: 6,
          pointHoverRadius: 8, borderColor: colour, borderWidth: 2, backgroundColor: kept ? "transparent" : colour });
      });
    });
    const money = (v) => (v === null ? "—" : v.toFixed(2) + (data.currency ? " " + data.currency : ""));
    draw("chart-pareto", { type: "scatter", data: { datasets: sets }, options: {
      onClick: (event, elements) => {
        if (!elements.length) return;
        const p = elements[0].element.$context.raw.point;
        const row = document.getElementById("pareto-row-" + p.id);
        const list = document.getElementById("pareto-list");
        if (list) list.open = true;
        if (row) {
          document.querySelectorAll("#pareto-table tr.picked").forEach((r) => r.classList.remove("picked"));
          row.classList.add("picked");
          row.scrollIntoView({ behavior: "smooth", block: "center" });
        }
      },
      plugins: { tooltip: { callbacks: { label: (ctx) => {
        const p = ctx.raw.point;
        return [(p.rank ? "rank " + p.rank : "not in the top list") + ": " + p.parts.battery + (p.packs > 1 ? " ×" + p.packs : ""),
          "ESC " + p.parts.esc + " · motor " + p.parts.motor + " · prop " + p.parts.propeller,
          "endurance " + p.endurance_min.toFixed(1) + " min · T/W " + p.thrust_to_weight.toFixed(2),
          "mass " + Math.round(p.all_up_mass_g) + " g · cost " + money(p.cost)];
      } } } },
      scales: { x: { title: { display: true, text: PARETO_AXES[x].label } }, y: { title: { display: true, text: PARETO_AXES[y].label } } } } });
    [xSel, ySel].forEach((el) => { if (el && !el.dataset.bound) { el.dataset.bound = "1"; el.addEventListener("change", paretoChart); } });
  }

  function benchCharts() {
    const node = document.getElementById("bench-chart-data");
    if (!node) return;
    const samples = JSON.parse(node.textContent || "{}").samples || [];
    const used = samples.filter((s) => !s.flagged), flagged = samples.filter((s) => s.flagged);
    const byThrust = used.filter((s) => s.model_electrical_power_w !== null).sort((a, b) => a.thrust_n - b.thrust_n);
    function measuredVsModel(id, key, modelKey, yLabel) {
      const sets = [
        { label: "measured", data: used.map((s) => ({ x: s.thrust_n, y: s[key] })), backgroundColor: PALETTE[0], pointRadius: 4 },
        { label: "flagged", data: flagged.map((s) => ({ x: s.thrust_n, y: s[key] })), borderColor: PALETTE[1], backgroundColor: "transparent", pointRadius: 5 },
      ];
      if (modelKey) sets.push({ label: "model", data: byThrust.map((s) => ({ x: s.thrust_n, y: s[modelKey] })), showLine: true, pointRadius: 0, borderColor: PALETTE[2] });
      draw(id, { type: "scatter", data: { datasets: sets }, options: { scales: {
        x: { title: { display: true, text: "thrust [N]" } }, y: { title: { display: true, text: yLabel } } } } });
    }
    measuredVsModel("bench-current", "bus_current_a", "model_bus_current_a", "bus current [A]");
    measuredVsModel("bench-power", "electrical_power_w", "model_electrical_power_w", "electrical power [W]");
    measuredVsModel("bench-gw", "specific_thrust_g_per_w", null, "specific thrust [g/W]");
    const withEff = used.filter((s) => s.drive_efficiency !== null);
    if (withEff.length) {
      draw("bench-eff", { type: "scatter", data: { datasets: [{ label: "drive efficiency", data: withEff.map((s) => ({ x: s.throttle, y: s.drive_efficiency })), backgroundColor: PALETTE[3] }] },
        options: { scales: { x: { title: { display: true, text: "throttle" } }, y: { title: { display: true, text: "drive efficiency" } } } } });
    } else {
      draw("bench-eff", { type: "scatter", data: { datasets: [{ label: "CT", data: used.map((s) => ({ x: s.rpm, y: s.thrust_coefficient })), backgroundColor: PALETTE[3] }] },
        options: { scales: { x: { title: { display: true, text: "rpm" } }, y: { title: { display: true, text: "thrust coefficient CT" } } } } });
    }
    const table = JSON.parse(node.textContent || "{}").prop_table;
    if (table && table.rows && table.rows.length) {
      const rpms = table.rows.map((r) => r.rpm);
      const span = [Math.min.apply(null, rpms.concat(used.map((s) => s.rpm))), Math.max.apply(null, rpms.concat(used.map((s) => s.rpm)))];
      const sets = [
        { label: "CT fitted", data: table.rows.map((r) => ({ x: r.rpm, y: r.ct })), showLine: true, borderColor: PALETTE[0], backgroundColor: PALETTE[0], pointRadius: 3, yAxisID: "ct" },
        { label: "CT measured (this run)", data: used.filter((s) => s.thrust_coefficient !== null).map((s) => ({ x: s.rpm, y: s.thrust_coefficient })), borderColor: PALETTE[0], backgroundColor: "transparent", pointRadius: 4, yAxisID: "ct" },
        { label: "CP fitted", data: table.rows.map((r) => ({ x: r.rpm, y: r.cp })), showLine: true, borderColor: PALETTE[1], backgroundColor: PALETTE[1], pointRadius: 3, borderDash: [6, 3], yAxisID: "cp" },
      ];
      const measuredCp = used.filter((s) => s.power_coefficient !== null && s.power_coefficient !== undefined);
      if (measuredCp.length) sets.push({ label: "CP measured (this run, from torque)", data: measuredCp.map((s) => ({ x: s.rpm, y: s.power_coefficient })), borderColor: PALETTE[1], backgroundColor: "transparent", pointRadius: 4, pointStyle: "rect", yAxisID: "cp" });
      if (table.entered_ct !== null) sets.push({ label: "CT entered", data: span.map((x) => ({ x: x, y: table.entered_ct })), showLine: true, pointRadius: 0, borderColor: PALETTE[0], borderDash: [2, 3], borderWidth: 1, yAxisID: "ct" });
      if (table.entered_cp !== null) sets.push({ label: "CP entered", data: span.map((x) => ({ x: x, y: table.entered_cp })), showLine: true, pointRadius: 0, borderColor: PALETTE[1], borderDash: [2, 3], borderWidth: 1, yAxisID: "cp" });
      draw("prop-coefficients", { type: "scatter", data: { datasets: sets }, options: { scales: {
        x: { title: { display: true, text: "rpm" } },
        ct: { position: "left", title: { display: true, text: "thrust coefficient CT" } },
        cp: { position: "right", title: { display: true, text: "power coefficient CP" }, grid: { drawOnChartArea: false } } },
        plugins: { legend: { labels: { boxWidth: 12, font: { size: 10 } } } } } });
    }
    draw("bench-residual", { type: "scatter", data: { datasets: [{ label: "residual", data: byThrust.map((s) => ({ x: s.thrust_n, y: 100 * s.residual_power })), backgroundColor: PALETTE[4] }] },
      options: { scales: { x: { title: { display: true, text: "thrust [N]" } }, y: { title: { display: true, text: "residual [%]" } } } } });
  }

  function tradeoffChart() {
    const node = document.getElementById("tradeoff-chart-data");
    if (!node) return;
    const data = JSON.parse(node.textContent || "{}");
    const points = data.points || [];
    draw("chart-tradeoff", { type: "scatter", data: { datasets: [{ label: "best plan", showLine: true, stepped: false,
      data: points.map((p) => ({ x: p.part_numbers, y: p.objective })), borderColor: PALETTE[0], backgroundColor: PALETTE[0], pointRadius: 6 }] },
      options: { onClick: (event, elements) => {
          if (!elements.length) return;
          const n = points[elements[0].index].part_numbers;
          const target = document.getElementById("tradeoff-" + n);
          if (target) { target.open = true; target.scrollIntoView({ behavior: "smooth", block: "center" }); }
        },
        scales: { x: { title: { display: true, text: "part numbers stocked" }, ticks: { stepSize: 1 } },
                  y: { title: { display: true, text: data.axis || "fleet objective" } } } } });
  }

  // Flight profile (explain page): each segment's mean electrical power as a step over time, and the state of
  // charge at the segment boundaries, from the row's own profile numbers.
  function profileChart() {
    const node = document.getElementById("profile-chart-data");
    if (!node) return;
    const data = JSON.parse(node.textContent || "null");
    if (!data || !data.segments) return;
    const power = [], soc = [];
    let t = 0;
    data.segments.forEach((s) => {
      const t1 = t + s.duration_s / 60;
      if (s.flown && s.energy_wh !== null) {
        const p = s.energy_wh * 3600 / s.duration_s;
        power.push({ x: t, y: p }, { x: t1, y: p });
      }
      if (s.start_state_of_charge !== null) soc.push({ x: t, y: 100 * s.start_state_of_charge });
      if (s.end_state_of_charge !== null) soc.push({ x: t1, y: 100 * s.end_state_of_charge });
      t = t1;
    });
    draw("chart-profile", { type: "scatter", data: { datasets: [
      { label: "mean electrical power [W]", data: power, showLine: true, pointRadius: 0, borderColor: PALETTE[0], yAxisID: "power" },
      { label: "state of charge [%]", data: soc, showLine: true, pointRadius: 3, borderColor: PALETTE[1], borderDash: [6, 3], yAxisID: "soc" },
    ] }, options: { scales: {
      x: { title: { display: true, text: "time [min]" } },
      power: { position: "left", beginAtZero: true, title: { display: true, text: "electrical power [W]" } },
      soc: { position: "right", min: 0, max: 100, title: { display: true, text: "state of charge [%]" }, grid: { drawOnChartArea: false } },
    } } });
  }

  function all() { predictCharts(); compareCharts(); paretoChart(); benchCharts(); tradeoffChart(); profileChart(); }
  document.addEventListener("DOMContentLoaded", all);
  document.addEventListener("htmx:afterSettle", all);
  window.liftmatchCharts = { draw: draw, palette: PALETTE, charts: charts };
})();
