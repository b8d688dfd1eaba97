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
      ] },
      options: { scales: {
        x: { title: { display: true, text: "thrust per rotor [N]" } },
        power: { position: "left", title: { display: true, text: "electrical power [W]" } },
        gw: { position: "right", title: { display: true, text: "specific thrust [g/W]" }, grid: { drawOnChartArea: false } },
      } },
    });
    const terms = ["motor_copper", "motor_no_load", "esc_conduction", "pwm_ripple", "switching", "dead_time", "input_capacitor", "calibrated_pwm"];
    draw("chart-losses", {
      type: "bar",
      data: { labels: data.losses.map((l) => l.label), datasets: terms.map((t, i) => ({
        label: t.replace("_", " ") + " [W]", data: data.losses.map((l) => l[t]), backgroundColor: PALETTE[i % PALETTE.length] })) },
      options: { scales: { x: { stacked: true }, y: { stacked: true, title: { display: true, text: "loss per rotor [W]" } } } },
    });
  }

  function all() { predictCharts(); }
  document.addEventListener("DOMContentLoaded", all);
  document.addEventListener("htmx:afterSettle", all);
  window.liftmatchCharts = { draw: draw, palette: PALETTE };
})();
