/* What the page does on its own, without a request: the order of the comparison table, and the
   preview of a K being dragged (panels follow the slider or the K line's handle; the server's fit is
   committed on release). */
(function () {
  "use strict";
  var NS = "growthcore_live";

  /* First click sorts ascending, the second descending, the third back to the engine's order. */
  function sort(clicks, current) {
    var nu = window.dash_clientside.no_update;
    var ctx = window.dash_clientside.callback_context;
    if (!ctx.triggered || !ctx.triggered.length || !ctx.triggered[0].value) { return nu; }
    var column;
    var id = ctx.triggered[0].prop_id;
    try { column = JSON.parse(id.slice(0, id.lastIndexOf("."))).column; } catch (e) { return nu; }
    if (!current || current.column !== column) { return {column: column, descending: false}; }
    if (!current.descending) { return {column: column, descending: true}; }
    return {column: null, descending: false};
  }

  /* ---------------------------------------------------------------- the drag preview

     With K held, the increments fit of a form whose change per step is b·g(p; K) is the regression
     through the origin b = Σ g·Δp / Σ g² (the engine's own numbers come back on release; a browser test
     compares the two). Only the logistic and Gompertz terms are evaluated here (app/callbacks/live.py,
     PREVIEW_FORMS); other forms keep their lines until K is released. */
  var TERMS = {
    logistic: function (p, K) { return p * (1 - p / K); },
    gompertz: function (p, K) { return p * Math.log(K / p); }
  };

  /* K to 4 significant digits, as the controls commit it (app/callbacks/capacity.py, rounded). */
  function rounded(k) { return (k === 0 || !isFinite(k)) ? k : Number(k.toPrecision(4)); }

  /* Python's "{:.4g}" for the numbers the preview writes into legends. */
  function g4(x) {
    if (!isFinite(x)) { return String(x); }
    if (x === 0) { return "0"; }
    var e = Math.floor(Math.log10(Math.abs(Number(x.toPrecision(4)))));
    if (e < -4 || e >= 4) {
      var m = Number((x / Math.pow(10, e)).toPrecision(4)), sign = e < 0 ? "-" : "+";
      var digits = String(Math.abs(e)); if (digits.length < 2) { digits = "0" + digits; }
      return String(m) + "e" + sign + digits;
    }
    return String(Number(x.toPrecision(4)));
  }

  /* Slope and uncentered R² of Δp on g(p; K) through the origin, and g itself. */
  function regression(model, p, dp, K) {
    var term = TERMS[model], g = new Array(p.length), sgg = 0, sgd = 0, sdd = 0, sse = 0, i;
    for (i = 0; i < p.length; i++) { g[i] = term(p[i], K); sgg += g[i] * g[i]; sgd += g[i] * dp[i]; sdd += dp[i] * dp[i]; }
    var b = sgd / sgg;
    for (i = 0; i < p.length; i++) { var e = dp[i] - b * g[i]; sse += e * e; }
    return {slope: b, r2: 1 - sse / sdd, g: g};
  }

  /* What the preview draws at K, as plain numbers (the browser test compares these with the engine). */
  function previewNumbers(store, K) {
    var out = {candidates: {}, fits: {}};
    (store.candidates || []).forEach(function (c) { out.candidates[c.label] = regression(c.model, c.p, c.dp, K); });
    (store.fits || []).forEach(function (f) {
      var r = regression(f.model, store.x, store.dy, K), term = TERMS[f.model];
      out.fits[f.label] = {slope: r.slope, r2: r.r2,
                           predicted: store.x.map(function (x) { return x + r.slope * term(x, K); })};
    });
    return out;
  }

  function plotOf(id) {
    var host = document.getElementById(id);
    return host ? host.querySelector(".js-plotly-plot") : null;
  }

  /* The trace id the figure builders give a trace the preview moves (growthcore/figures/common.py, preview_uid). */
  function uidOf(role, label) {
    var hex = Array.prototype.map.call(new TextEncoder().encode(label), function (b) {
      return (b < 16 ? "0" : "") + b.toString(16); }).join("");
    return role + "-" + hex;
  }

  function indexByUid(gd, uid) {
    for (var i = 0; i < gd.data.length; i++) { if (gd.data[i].uid === uid) { return i; } }
    return -1;
  }

  function drawCandidates(store, K, numbers) {
    var gd = plotOf("panel-candidate");
    if (!gd || !gd.data || !(store.candidates || []).length) { return; }
    var data = gd.data.slice();
    store.candidates.forEach(function (c) {
      var pts = indexByUid(gd, uidOf("candidate-points", c.label)), line = indexByUid(gd, uidOf("candidate-line", c.label));
      var r = numbers.candidates[c.label];
      if (pts < 0 || line < 0 || !isFinite(r.slope)) { return; }
      data[pts] = Object.assign({}, data[pts], {x: r.g});
      var order = r.g.map(function (_, i) { return i; }).sort(function (a, b) { return r.g[a] - r.g[b]; });
      data[line] = Object.assign({}, data[line], {
        x: [0].concat(order.map(function (i) { return r.g[i]; })),
        y: [0].concat(order.map(function (i) { return r.slope * r.g[i]; })),
        name: "g = " + c.label + ": " + c.slope_name + " = " + g4(r.slope) + ", uncentered R² = " + r.r2.toFixed(3)
      });
    });
    Plotly.react(gd, data, gd.layout);
  }

  function drawTrajectory(store, K, numbers) {
    var gd = plotOf("panel-trajectory");
    if (!gd || !gd.data) { return; }
    var data = gd.data.slice();
    data.forEach(function (trace, i) {
      if (trace.meta === "capacity") { data[i] = Object.assign({}, trace, {y: [K, K]}); }
    });
    (store.fits || []).forEach(function (f) {
      var r = numbers.fits[f.label], term = TERMS[f.model];
      if (!isFinite(r.slope)) { return; }
      var step = indexByUid(gd, uidOf("one-step", f.label)), path = indexByUid(gd, uidOf("iterated", f.label));
      if (step >= 0) { data[step] = Object.assign({}, data[step], {y: r.predicted}); }
      if (path >= 0) {
        var y = data[path].y.slice();
        for (var k = 1; k < y.length; k++) { y[k] = y[k - 1] + r.slope * term(y[k - 1], K); }
        data[path] = Object.assign({}, data[path], {y: y});
      }
    });
    var layout = Object.assign({}, gd.layout);
    if (handle) { layout.yaxis = Object.assign({}, layout.yaxis, {range: handle.range, autorange: false}); }
    var log = layout.yaxis && layout.yaxis.type === "log";
    if (layout.shapes && layout.shapes.length) {
      layout.shapes = layout.shapes.slice();
      layout.shapes[0] = Object.assign({}, layout.shapes[0], {yanchor: K});
    }
    if (layout.annotations && layout.annotations.length && /^K = /.test(layout.annotations[0].text || "")) {
      layout.annotations = layout.annotations.slice();
      var unit = layout.annotations[0].text.replace(/^K = \S+/, "");
      layout.annotations[0] = Object.assign({}, layout.annotations[0], {
        text: "K = " + g4(K) + unit, y: log ? Math.log10(K) : K});
    }
    Plotly.react(gd, data, layout);
  }

  var pending = null;

  /* Draws the preview at K at the next frame (pointer moves come faster than frames; the last one wins). */
  function schedule(store, K) {
    var first = pending === null;
    pending = {store: store, K: K};
    if (first) {
      requestAnimationFrame(function () {
        var job = pending; pending = null;
        var numbers = previewNumbers(job.store, job.K);
        drawCandidates(job.store, job.K, numbers);
        drawTrajectory(job.store, job.K, numbers);
        window.__gcPreviewK = job.K;
      });
    }
  }

  /* Only a drag previews: the slider also reports a drag value when the server sets its value, and a
     preview then would draw over the server's figures. */
  var dragging = false;
  document.addEventListener("pointerdown", function (e) {
    dragging = !!(e.target && e.target.closest && e.target.closest("#model-k-slider"));
  }, true);
  document.addEventListener("pointerup", function () { dragging = false; }, true);

  /* The slider's drag value. */
  function preview(drag, store) {
    var nu = window.dash_clientside.no_update;
    if (!dragging || drag === null || drag === undefined || !store || !window.Plotly) { return nu; }
    var K = rounded(Number(drag));
    if (K > 0) { schedule(store, K); }
    return nu;  // nothing for Dash to store: a store update per pointer move costs the page a render
  }

  /* The K line's handle (the trajectory's first shape) being dragged: plotly reports the move only on
     release, so the pointer is followed here. K is read from the pointer through the y axis as it was
     when the drag began, which is also how plotly works out the value it reports on release; the axis
     keeps that range while the preview draws (growthcore/figures/trajectory.py, CAPACITY_SHAPE). */
  var latest = null, handle = null;
  function keep(store) {
    latest = store || null;
    return window.dash_clientside.no_update;
  }
  document.addEventListener("pointerdown", function (e) {
    var hit = e.target && e.target.closest && e.target.closest("#panel-trajectory .shapelayer path[data-index='0']");
    var gd = hit ? plotOf("panel-trajectory") : null;
    var full = gd && gd._fullLayout;
    if (!full || !full.shapes || !full.shapes.length || !(full.shapes[0].yanchor > 0)) { handle = null; return; }
    var ya = full.yaxis;
    handle = {axis: ya, y0: e.clientY, p0: ya.l2p(ya.d2l(full.shapes[0].yanchor)), range: ya.range.slice()};
  }, true);
  document.addEventListener("pointermove", function (e) {
    if (!handle || !latest || !window.Plotly) { return; }
    var K = rounded(handle.axis.l2d(handle.axis.p2l(handle.p0 + e.clientY - handle.y0)));
    if (K > 0 && isFinite(K)) { schedule(latest, K); }
  }, true);
  document.addEventListener("pointerup", function () { handle = null; }, true);

  /* The trajectory's relayout events: only those that moved a shape's anchor (the K line) go to the
     server. Autosize, zoom and pan events would otherwise start a reply that cancels one in flight. */
  function kDrop(relayout) {
    var nu = window.dash_clientside.no_update;
    if (!relayout) { return nu; }
    var moved = Object.keys(relayout).some(function (k) { return /^shapes\[\d+\]\.yanchor$/.test(k); }) ||
      Array.isArray(relayout.shapes);
    return moved ? relayout : nu;
  }

  /* ---------------------------------------------------------------- panel 7 on screen

     The dynamics panel (its cobweb and sweep are the page's costliest figures) is redrawn for new fits
     only while it is on screen or near it; the server is told when that changes. */
  var SLOT = "slot-dynamics", VISIBLE = "store-dynamics-visible";
  function watchPanelSeven() {
    var slot = document.getElementById(SLOT);
    var set = window.dash_clientside && window.dash_clientside.set_props;
    if (!slot || !set || !window.IntersectionObserver) { setTimeout(watchPanelSeven, 200); return; }
    var shown = null;
    new IntersectionObserver(function (entries) {
      var now = entries[entries.length - 1].isIntersecting;
      if (now !== shown) { shown = now; set(VISIBLE, {data: now}); }
    }, {rootMargin: "300px 0px"}).observe(slot);
  }
  /* A request to draw panel 7 only when it is both stale and in view. */
  var draws = 0;
  function drawWhenSeen(visible, stale) {
    return visible && stale ? ++draws : window.dash_clientside.no_update;
  }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", watchPanelSeven);
  } else {
    watchPanelSeven();
  }

  window.dash_clientside = window.dash_clientside || {};
  window.dash_clientside[NS] = Object.assign(window.dash_clientside[NS] || {},
                                             {sort: sort, preview: preview, keep: keep, previewNumbers: previewNumbers,
                                              kDrop: kDrop, drawWhenSeen: drawWhenSeen});
})();
