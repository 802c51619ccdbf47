// Lungflag console: a patient's timeline. Data from the audit API (same origin, the session's cookie); charts drawn
// with Chart.js (webjar). Shaded bands: advisory episodes. A point of the oxygenation chart opens its evaluation.
(function () {
  "use strict";
  var root = document.getElementById("timeline");
  if (!root) { return; }
  var status = document.getElementById("timeline-status");
  var evaluationBase = root.getAttribute("data-evaluation");

  function two(n) { return (n < 10 ? "0" : "") + n; }
  function label(ms) {
    var d = new Date(ms);
    return two(d.getUTCMonth() + 1) + "-" + two(d.getUTCDate()) + " " + two(d.getUTCHours()) + ":" + two(d.getUTCMinutes());
  }

  var shading = {
    id: "episodes",
    beforeDatasetsDraw: function (chart, args, options) {
      var x = chart.scales.x, area = chart.chartArea, ctx = chart.ctx;
      (options.bands || []).forEach(function (b) {
        var left = Math.max(x.getPixelForValue(b.start), area.left);
        var right = Math.min(x.getPixelForValue(b.end), area.right);
        if (right <= left) { return; }
        ctx.save();
        ctx.fillStyle = b.silent ? "rgba(120, 120, 120, 0.16)" : "rgba(214, 140, 0, 0.20)";
        ctx.fillRect(left, area.top, right - left, area.bottom - area.top);
        ctx.restore();
      });
    }
  };

  function unit(u) {
    return u === "1" ? "" : u.replace("mm[Hg]", "mmHg").replace("cm[H2O]", "cmH2O");
  }

  function points(series) {
    return series.points.map(function (p) { return { x: Date.parse(p.time), y: p.value, source: p.source }; });
  }

  function chart(canvasId, datasets, bands, yTitle, onPoint, range, y1Title, axes) {
    var canvas = document.getElementById(canvasId);
    var scales = {
      x: { type: "linear", min: range.min, max: range.max, ticks: { callback: label, maxRotation: 0 },
           title: { display: true, text: "clinical time (UTC)" } },
      y: { title: { display: true, text: yTitle }, beginAtZero: true }
    };
    if (y1Title) {
      scales.y1 = { position: "right", title: { display: true, text: y1Title }, beginAtZero: true,
                    grid: { drawOnChartArea: false } };
    }
    Object.keys(axes || {}).forEach(function (k) { Object.assign(scales[k], axes[k]); });
    return new Chart(canvas, {
      type: "line",
      data: { datasets: datasets },
      options: {
        responsive: true, maintainAspectRatio: false, animation: false, parsing: false,
        interaction: { mode: "nearest", intersect: true },
        scales: scales,
        plugins: {
          episodes: { bands: bands },
          legend: { labels: { usePointStyle: true } },
          tooltip: { callbacks: {
            title: function (items) { return label(items[0].parsed.x); },
            afterLabel: function (item) { return item.raw.source ? "from " + item.raw.source : ""; }
          } }
        },
        onClick: function (event, elements) {
          if (onPoint && elements.length) {
            var e = elements[0];
            onPoint(datasets[e.datasetIndex].data[e.index]);
          }
        }
      },
      plugins: [shading]
    });
  }

  function dataset(series, colour, dash, shape) {
    return { label: series.label + (unit(series.unit || "1") ? " (" + unit(series.unit) + ")" : ""),
             data: points(series), borderColor: colour, backgroundColor: colour, borderDash: dash || [],
             pointStyle: shape || "circle", pointRadius: 5, pointHoverRadius: 8, spanGaps: true, stepped: false };
  }

  fetch(root.getAttribute("data-source"), { credentials: "same-origin", headers: { "Accept": "application/json" } })
    .then(function (r) {
      if (!r.ok) { throw new Error("the timeline answered " + r.status); }
      return r.json();
    })
    .then(function (t) {
      var byKey = {};
      t.series.forEach(function (s) { byKey[s.key] = s; });
      var all = [];
      t.series.forEach(function (s) { s.points.forEach(function (p) { all.push(Date.parse(p.time)); }); });
      t.evaluations.forEach(function (e) { all.push(Date.parse(e.time)); });
      var min = all.length ? Math.min.apply(null, all) : Date.now() - 48 * 3600e3;
      var max = all.length ? Math.max.apply(null, all) : Date.now();
      var pad = Math.max((max - min) * 0.03, 15 * 60e3);
      var range = { min: min - pad, max: max + pad };
      // shade each chart with the episodes of the rules it concerns
      var OXYGENATION = ["hypoxemia", "pediatric-hypoxemia", "prone-criteria-met"];
      function bandsOf(test) {
        return t.episodes.filter(function (e) { return test(e.ruleId); }).map(function (e) {
          return { start: Date.parse(e.startedAt), end: e.endedAt ? Date.parse(e.endedAt) : range.max,
                   silent: e.mode === "SILENT" };
        });
      }
      var oxygenationBands = bandsOf(function (r) { return OXYGENATION.indexOf(r) >= 0; });
      var ventilationBands = bandsOf(function (r) { return OXYGENATION.indexOf(r) < 0; });
      var allBands = bandsOf(function () { return true; });
      var evaluationsAt = {};
      t.evaluations.forEach(function (e) {
        var k = Date.parse(e.time);
        if (!evaluationsAt[k] || e.ruleId.indexOf("hypoxemia") >= 0) { evaluationsAt[k] = e; }
      });
      function open(point) {
        var e = evaluationsAt[point.x];
        if (e) { window.location.href = evaluationBase + e.id; }
      }
      chart("chart-oxygenation", [dataset(byKey["pf-ratio"], "#1a4d8f"), dataset(byKey["sf-ratio"], "#8c2d75", [6, 4], "triangle")],
            oxygenationBands, "P/F (mmHg) or S/F", open, range);
      var dp = dataset(byKey["driving-pressure"], "#a14600", [6, 4], "rect");
      dp.yAxisID = "y1";
      chart("chart-ventilation", [dataset(byKey["ventilatory-ratio"], "#2d5a27"), dp], ventilationBands,
            "ventilatory ratio", open, range, "driving pressure (cmH2O)");
      var fio2 = dataset(byKey["fio2"], "#0f6e6e", [6, 4], "rectRot");
      fio2.yAxisID = "y1";
      // PEEP on 0-25 cmH2O and FiO2 on 0-100 %, so the two lines do not sit on top of each other
      chart("chart-settings", [dataset(byKey["peep"], "#4a4a4a"), fio2], allBands, "PEEP (cmH2O)", null, range,
            "FiO2 (%)", { y: { suggestedMax: 25 }, y1: { min: 0, max: 100 } });
      var body = document.querySelector("#evaluation-table tbody");
      t.evaluations.slice().reverse().forEach(function (e) {
        var tr = document.createElement("tr");
        var a = document.createElement("a");
        a.href = evaluationBase + e.id;
        var d = new Date(Date.parse(e.time));
        a.textContent = d.getUTCFullYear() + "-" + label(d.getTime()) + " UTC";
        [a, e.ruleId, e.outcome.toLowerCase().replace(/_/g, " "), e.tierCode || "-"].forEach(function (v) {
          var td = document.createElement("td");
          if (typeof v === "string") { td.textContent = v; } else { td.appendChild(v); }
          tr.appendChild(td);
        });
        body.appendChild(tr);
      });
      status.textContent = t.evaluations.length + " evaluations and " + t.episodes.length +
        " advisory episodes shown. Shaded: the oxygenation chart shows the oxygenation advisories, the ventilation" +
        " chart the ventilation advisories, the settings chart all of them (grey when the rule ran silent).";
      root.setAttribute("data-ready", "true");
    })
    .catch(function (err) {
      status.textContent = "The timeline could not be loaded: " + err.message;
      root.setAttribute("data-ready", "error");
    });
})();
