/* Linked highlighting: the observation under the pointer is ringed in every panel.
   Works on the plotted figures directly (Plotly.restyle of one marker trace per panel), so a
   hover never costs a trip to the server. Point traces carry meta "points" and customdata
   [index, row]; each panel has one empty trace with meta "highlight" that receives the ring.
   The panels are the graphs whose hovers are the callback's inputs (app/callbacks/highlight.py,
   ids.GRAPHS): their ids come with each call, so they are written in one place only. */
(function () {
  "use strict";
  var NS = "growthcore_linked";

  function plotOf(id) {
    var host = document.getElementById(id);
    return host ? host.querySelector(".js-plotly-plot") : null;
  }

  function indexOf(customdata) {
    if (Array.isArray(customdata)) { return customdata[0]; }
    return typeof customdata === "number" ? customdata : null;
  }

  /* One highlight trace per y axis (a residual panel with two error scales has two): each rings
     the points of its own axis. */
  function ring(gd, index) {
    if (!gd || !gd.data || !window.Plotly) { return; }
    var targets = [], xs = [], ys = [];
    gd.data.forEach(function (trace, k) {
      if (trace.meta !== "highlight") { return; }
      var axis = trace.yaxis || "y", tx = [], ty = [];
      gd.data.forEach(function (pts) {
        if (pts.meta !== "points" || index === null || !pts.customdata || (pts.yaxis || "y") !== axis) { return; }
        for (var i = 0; i < pts.customdata.length; i++) {
          if (indexOf(pts.customdata[i]) === index) { tx.push(pts.x[i]); ty.push(pts.y[i]); }
        }
      });
      if ((trace.x || []).length === 0 && tx.length === 0) { return; }
      targets.push(k); xs.push(tx); ys.push(ty);
    });
    if (targets.length) { window.Plotly.restyle(gd, {x: xs, y: ys}, targets); }
  }

  /* The point under the pointer (null when it leaves), ringed in every linked panel. */
  function highlight() {
    var ctx = window.dash_clientside.callback_context;
    var index = null;
    if (ctx && ctx.triggered && ctx.triggered.length) {
      var value = ctx.triggered[0].value;
      if (value && value.points && value.points.length) {
        index = indexOf(value.points[0].customdata);
        if (index === undefined) { index = null; }
      }
    }
    ((ctx && ctx.inputs_list) || []).forEach(function (input) { ring(plotOf(input.id), index); });
    return index;
  }

  window.dash_clientside = window.dash_clientside || {};
  window.dash_clientside[NS] = Object.assign(window.dash_clientside[NS] || {}, {highlight: highlight});
})();
