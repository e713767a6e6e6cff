/* Linked highlighting: the observation under the pointer is ringed in every panel.
   Works on the plotted figures directly (Plotly.restyle of one marker trace per panel), so a
   hover never costs a trip to the server. Point traces carry meta "points" and customdata
   [index, row]; each panel has one empty trace with meta "highlight" that receives the ring. */
(function () {
  "use strict";
  var GRAPHS = ["panel-change", "panel-candidate", "panel-trajectory", "panel-residual-time",
                "panel-residual-fitted", "panel-observed-predicted"];

  function plotOf(id) {
    var host = document.getElementById(id);
    return host ? host.querySelector(".js-plotly-plot") : null;
  }

  function indexOf(customdata) {
    if (Array.isArray(customdata)) { return customdata[0]; }
    return typeof customdata === "number" ? customdata : null;
  }

  function ring(gd, index) {
    if (!gd || !gd.data || !window.Plotly) { return; }
    var target = -1, xs = [], ys = [];
    gd.data.forEach(function (trace, k) {
      if (trace.meta === "highlight") { target = k; return; }
      if (trace.meta !== "points" || index === null || !trace.customdata) { return; }
      for (var i = 0; i < trace.customdata.length; i++) {
        if (indexOf(trace.customdata[i]) === index) { xs.push(trace.x[i]); ys.push(trace.y[i]); }
      }
    });
    if (target < 0) { return; }
    var current = gd.data[target];
    if ((current.x || []).length === 0 && xs.length === 0) { return; }
    window.Plotly.restyle(gd, {x: [xs], y: [ys]}, [target]);
  }

  window.dash_clientside = Object.assign({}, window.dash_clientside, {
    growthcore: {
      highlight: function () {
        var ctx = window.dash_clientside.callback_context;
        var index = null;
        if (ctx && ctx.triggered && ctx.triggered.length) {
          var value = ctx.triggered[0].value;
          if (value && value.points && value.points.length) {
            index = indexOf(value.points[0].customdata);
            if (index === undefined) { index = null; }
          }
        }
        GRAPHS.forEach(function (id) { ring(plotOf(id), index); });
        return index;
      }
    }
  });
})();
