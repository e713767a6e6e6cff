/* Export in the browser: PNGs through plotly.js itself (the server needs no browser), the list of
   forms that can be exported, and the K of a reopened record. Functions of the clientside
   callbacks registered in app/callbacks/export.py. */
(function () {
  "use strict";
  var NS = "growthcore_export";
  var IMAGE_MESSAGE = "export-image-message";

  var CRC_TABLE = (function () {
    var table = new Uint32Array(256);
    for (var n = 0; n < 256; n++) {
      var c = n;
      for (var k = 0; k < 8; k++) { c = (c & 1) ? (0xEDB88320 ^ (c >>> 1)) : (c >>> 1); }
      table[n] = c >>> 0;
    }
    return table;
  })();

  function crc32(bytes) {
    var c = 0xFFFFFFFF;
    for (var i = 0; i < bytes.length; i++) { c = CRC_TABLE[(c ^ bytes[i]) & 0xFF] ^ (c >>> 8); }
    return (c ^ 0xFFFFFFFF) >>> 0;
  }

  function u32(value) {
    return [(value >>> 24) & 255, (value >>> 16) & 255, (value >>> 8) & 255, value & 255];
  }

  /* The PNG with a pHYs chunk stating `dpi` right after IHDR (any old one dropped), so that
     page-layout programs place a print image at its intended physical size. */
  function withDpi(bytes, dpi) {
    var ppm = Math.round(dpi / 0.0254);
    var body = [0x70, 0x48, 0x59, 0x73].concat(u32(ppm), u32(ppm), [1]);
    var chunk = u32(9).concat(body, u32(crc32(Uint8Array.from(body))));
    var out = Array.prototype.slice.call(bytes, 0, 8);
    var pos = 8;
    while (pos + 8 <= bytes.length) {
      var length = ((bytes[pos] << 24) | (bytes[pos + 1] << 16) | (bytes[pos + 2] << 8) | bytes[pos + 3]) >>> 0;
      var kind = String.fromCharCode(bytes[pos + 4], bytes[pos + 5], bytes[pos + 6], bytes[pos + 7]);
      var end = pos + 12 + length;
      if (kind !== "pHYs") { out = out.concat(Array.prototype.slice.call(bytes, pos, end)); }
      if (kind === "IHDR") { out = out.concat(chunk); }
      pos = end;
    }
    return Uint8Array.from(out);
  }

  function bytesOf(dataUrl) {
    var text = atob(dataUrl.split(",", 2)[1]);
    var bytes = new Uint8Array(text.length);
    for (var i = 0; i < text.length; i++) { bytes[i] = text.charCodeAt(i); }
    return bytes;
  }

  function save(bytes, filename) {
    var url = URL.createObjectURL(new Blob([bytes], {type: "image/png"}));
    var link = document.createElement("a");
    link.href = url;
    link.download = filename;
    link.style.display = "none";
    document.body.appendChild(link);
    link.click();
    document.body.removeChild(link);
    setTimeout(function () { URL.revokeObjectURL(url); }, 30000);
  }

  /* The page stays idle this long after each download it starts, so that the browser takes it. Measured in
     headless Chromium on 2 cores: with every image drawn first it lost files at 20 ms and took every one
     from 40 ms; with a drawing right after each download it needed 60 ms. */
  var BETWEEN_FILES_MS = 100;
  function pause(ms) { return new Promise(function (resolve) { setTimeout(resolve, ms); }); }

  function plotOf(id) {
    var host = document.getElementById(id);
    return host ? host.querySelector(".js-plotly-plot") : null;
  }

  function draw(job) {
    var options = {format: "png", width: job.width, height: job.height, scale: job.scale};
    var source;
    if (job.graph) {
      source = plotOf(job.graph);
      if (!source || !source.data || !source.data.length) { return Promise.resolve(null); }
    } else {
      var layout = Object.assign({}, job.figure.layout, {width: job.width, height: job.height});
      source = {data: job.figure.data, layout: layout};
    }
    return window.Plotly.toImage(source, options).then(function (url) {
      var bytes = bytesOf(url);
      return job.dpi ? withDpi(bytes, job.dpi) : bytes;
    });
  }

  function report(text, failed) {
    var set = window.dash_clientside && window.dash_clientside.set_props;
    if (set) {
      set(IMAGE_MESSAGE, {children: text, className: failed ? "message message-error" : "message message-ok"});
    }
  }

  function images(spec) {
    var nu = window.dash_clientside.no_update;
    if (!spec || !spec.images) { return nu; }
    if (!window.Plotly) { return "PNG export needs plotly.js, which has not loaded in this page."; }
    var jobs = spec.images.concat(spec.live || []);
    var saved = [], missed = [], drawn = [];
    var chain = Promise.resolve();
    // every image is drawn before the first is saved: a download needs the page idle for a moment after
    // it starts, which a drawing right after it would not leave
    jobs.forEach(function (job) {
      chain = chain.then(function () { return draw(job); }).then(function (bytes) { drawn.push(bytes); });
    });
    jobs.forEach(function (job, i) {
      chain = chain.then(function () {
        if (drawn[i]) { save(drawn[i], job.filename); saved.push(job.filename); } else { missed.push(job.filename); }
        drawn[i] = null;
        return pause(BETWEEN_FILES_MS);
      });
    });
    chain.then(function () {
      // the count said here is the count announced: every announced file, or the ones missing by name
      var text = saved.length + " of " + jobs.length + " PNG images (" + spec.size + ") saved: " + saved.join(", ") + ".";
      if (missed.length) { text += " Not drawn: " + missed.join(", ") + "."; }
      report(text, missed.length > 0);
    }).catch(function (err) {
      report("PNG export stopped after " + saved.length + " images: " + (err && err.message ? err.message : err), true);
    });
    return "Drawing " + jobs.length + " PNG images (" + spec.size + ")…";
  }

  /* The forms that can be exported are the ones fitted now; a form stays chosen while it is fitted,
     and new forms are chosen when every form was. */
  function forms(fits, value, options) {
    var models = [];
    ((fits && fits.fits) || []).forEach(function (f) {
      if (models.indexOf(f.model) < 0) { models.push(f.model); }
    });
    var status = {};
    ((fits && fits.fits) || []).forEach(function (f) {
      status[f.model] = (status[f.model] || []).concat([f.status === "converged" ? f.method : f.method + " failed"]);
    });
    var before = (options || []).map(function (o) { return o.value; });
    var chosen = value || [];
    var all = before.length === 0 || before.every(function (m) { return chosen.indexOf(m) >= 0; });
    var next = all ? models.slice() : models.filter(function (m) { return chosen.indexOf(m) >= 0; });
    var opts = models.map(function (m) { return {label: m + " (" + status[m].join(", ") + ")", value: m}; });
    return [opts, next];
  }

  window.dash_clientside = window.dash_clientside || {};
  window.dash_clientside[NS] = {images: images, forms: forms};
})();
