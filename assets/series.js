/* The many-series view: a click on a grid panel or a plate well opens that series in the panels, and
   the page scrolls to them. Functions of the clientside callbacks registered in app/callbacks/series/. */
(function () {
  "use strict";
  var NS = "growthcore_series";

  /* The panels' column (its id comes with the call, from app/ids.py) scrolled to the top of the window. */
  function scrollToPanels(gridClick, plateClick, mainId) {
    var main = document.getElementById(mainId);
    if (main) { main.scrollIntoView({block: "start"}); }
    return window.dash_clientside.no_update;
  }

  window.dash_clientside = window.dash_clientside || {};
  window.dash_clientside[NS] = Object.assign(window.dash_clientside[NS] || {}, {scrollToPanels: scrollToPanels});
})();
