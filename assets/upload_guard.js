// A file far over the upload limit is refused by the browser before any request is made, so the
// server never sees it. Watch drops and file choices on upload areas that carry a limit and report
// such a file through a store, so that the page can say what happened instead of doing nothing.
(function () {
  function refuse(event) {
    var target = event.target;
    var area = target && target.closest ? target.closest("[data-upload-limit]") : null;
    if (!area || !window.dash_clientside || !window.dash_clientside.set_props) {
      return;
    }
    var files = (event.dataTransfer && event.dataTransfer.files) || target.files || [];
    var limit = Number(area.getAttribute("data-upload-limit"));
    for (var i = 0; i < files.length; i++) {
      if (files[i].size > limit) {
        window.dash_clientside.set_props(area.getAttribute("data-refused-store"), {
          data: {name: files[i].name, size: files[i].size, at: Date.now()}
        });
        return;
      }
    }
  }
  document.addEventListener("drop", refuse, true);
  document.addEventListener("change", refuse, true);
})();
