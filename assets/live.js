/* What the page does on its own, without a request: the order of the comparison table, and the
   preview of a K being dragged (panels follow the slider; the server's fit is committed on release). */
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

  window.dash_clientside = window.dash_clientside || {};
  window.dash_clientside[NS] = Object.assign(window.dash_clientside[NS] || {}, {sort: sort});
})();
