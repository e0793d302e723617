/* edgefit pages: a little script of our own. Every page works without it (plain forms,
   a refreshing progress page); with it: drop files, see what the reader detected before
   fitting, live progress, the report frame sized to its content, the trend plot. Data is
   always put into the page as text (textContent), never as markup. */
(function () {
  "use strict";
  document.documentElement.classList.add("js");

  function el(tag, cls, text) {
    var e = document.createElement(tag);
    if (cls) { e.className = cls; }
    if (text !== undefined && text !== null) { e.textContent = String(text); }
    return e;
  }

  function csrfOf(form) {
    var f = form && form.querySelector("input[name=csrf_token]");
    return f ? f.value : "";
  }

  /* ------------------------------------------------------------ upload: drop + detect */
  function setupUpload() {
    var form = document.getElementById("upload-form");
    if (!form) { return; }
    var input = document.getElementById("file");
    var drop = document.getElementById("drop");
    var out = document.getElementById("detected");
    var seq = 0;

    ["dragenter", "dragover"].forEach(function (t) {
      drop.addEventListener(t, function (ev) {
        ev.preventDefault(); drop.classList.add("over");
      });
    });
    ["dragleave", "dragend"].forEach(function (t) {
      drop.addEventListener(t, function () { drop.classList.remove("over"); });
    });
    drop.addEventListener("drop", function (ev) {
      ev.preventDefault(); drop.classList.remove("over");
      if (!ev.dataTransfer || !ev.dataTransfer.files.length) { return; }
      var dt = new DataTransfer();
      Array.prototype.forEach.call(input.files, function (f) { dt.items.add(f); });
      Array.prototype.forEach.call(ev.dataTransfer.files, function (f) { dt.items.add(f); });
      input.files = dt.files;
      inspect();
    });
    input.addEventListener("change", inspect);
    ["quantity", "x_unit"].forEach(function (id) {
      var s = document.getElementById(id);
      if (s) { s.addEventListener("change", function () { if (input.files.length) { inspect(); } }); }
    });
    form.addEventListener("submit", function () {
      var b = document.getElementById("upload-submit");
      if (b) { b.disabled = true; b.textContent = "Uploading…"; }
    });

    function inspect() {
      var mine = ++seq;
      out.textContent = "";
      if (!input.files.length) { return; }
      out.appendChild(el("p", "muted", "Reading " + input.files.length + " file" +
                         (input.files.length === 1 ? "" : "s") + "…"));
      var fd = new FormData();
      Array.prototype.forEach.call(input.files, function (f) { fd.append("file", f, f.name); });
      fd.append("quantity", document.getElementById("quantity").value);
      fd.append("x_unit", document.getElementById("x_unit").value);
      fetch(form.getAttribute("data-inspect"), {
        method: "POST", body: fd, credentials: "same-origin",
        headers: {"X-CSRF-Token": csrfOf(form), "Accept": "application/json"}
      }).then(function (r) {
        return r.json().then(function (body) { return {ok: r.ok, body: body}; });
      }).then(function (res) {
        if (mine !== seq) { return; }
        out.textContent = "";
        if (!res.ok) {
          out.appendChild(el("p", "alert", (res.body.error || {}).message || "The files could not be checked."));
          return;
        }
        showDetections(res.body.files);
      }).catch(function () {
        if (mine !== seq) { return; }
        out.textContent = "";
        out.appendChild(el("p", "muted", "The files could not be checked here; they are read again when you upload."));
      });
    }

    function showDetections(files) {
      var h = el("h3", "kicker", "Detected");
      out.appendChild(h);
      var bad = 0;
      files.forEach(function (f) {
        var box = el("div", "det-file");
        var name = el("p", "file-name");
        name.appendChild(el("span", f.ok ? "det-ok" : "det-bad", f.ok ? "✓ " : "✗ "));
        name.appendChild(document.createTextNode(f.file));
        box.appendChild(name);
        if (!f.ok) {
          bad += 1;
          box.appendChild(el("pre", "reader-message", f.message));
        } else {
          f.spectra.forEach(function (s) {
            var line = el("div", "det-line");
            var range = s.x_range ? " · " + fmt(s.x_range[0]) + "–" + fmt(s.x_range[1]) + " " + s.x_unit : "";
            line.textContent = (s.column ? s.column + ": " : "") + s.quantity + " (" + s.y_unit +
              ") against " + s.x_unit + " · " + s.points + " points" + range +
              (s.sample ? " · sample " + s.sample : "");
            box.appendChild(line);
            s.warnings.forEach(function (w) {
              var wl = el("div", "det-line warn", w);
              if (s.thickness_offer) {
                var th = document.getElementById("thickness");
                if (/thickness/.test(w) && th) {
                  var b = el("button", "offer", "use " + s.thickness_offer);
                  b.type = "button";
                  b.addEventListener("click", function () { th.value = s.thickness_offer; th.focus(); });
                  wl.appendChild(b);
                }
              }
              box.appendChild(wl);
            });
          });
        }
        out.appendChild(box);
      });
      if (bad) {
        out.appendChild(el("p", "help", "Files that cannot be read are reported and not stored; " +
          "options named in a fix (--quantity, --x-unit, …) are the fields of this form."));
      }
    }

    function fmt(v) { return Math.abs(v) >= 100 ? v.toFixed(0) : v.toPrecision(4); }
  }

  /* ------------------------------------------------------------ job progress */
  function setupProgress() {
    var box = document.querySelector("[data-job-status]");
    if (!box) { return; }
    var state = box.getAttribute("data-state");
    if (state === "done" || state === "failed") { return; }
    var bar = box.querySelector("progress");
    var text = box.querySelector(".progress-text");
    var lastDone = box.getAttribute("data-done");
    var delay = 500;

    function refreshResults(final) {
      /* fetch this page again and put its results in place (a reload when that fails) */
      return fetch(location.href, {credentials: "same-origin"}).then(function (r) {
        if (!r.ok || r.redirected) { throw new Error("reload"); }
        return r.text();
      }).then(function (html) {
        var doc = new DOMParser().parseFromString(html, "text/html");
        var ids = final ? ["job-results", "job-progress", "refit-progress"] : ["job-results"];
        if (final && !document.getElementById("job-results")) { location.reload(); return; }
        ids.forEach(function (id) {
          var now = document.getElementById(id), next = doc.getElementById(id);
          if (now && next) { now.replaceWith(next); }
        });
        if (final) {
          var h1 = document.querySelector("h1"), h1n = doc.querySelector("h1");
          if (h1 && h1n) { h1.textContent = h1n.textContent; }
          var acts = document.querySelector(".head-actions"), actsn = doc.querySelector(".head-actions");
          if (acts && actsn) { acts.replaceWith(actsn); }
          document.title = doc.title;
        }
      }).catch(function () { location.reload(); });
    }

    function poll() {
      fetch(box.getAttribute("data-job-status"), {credentials: "same-origin",
                                                    headers: {"Accept": "application/json"}})
        .then(function (r) {
          if (r.status === 401) { location.reload(); throw new Error("signed out"); }
          return r.json();
        })
        .then(function (job) {
          bar.max = job.progress.total || 1;
          bar.value = job.progress.done;
          text.textContent = job.progress.done + " of " + job.progress.total +
            (job.progress.total === 1 ? " spectrum" : " spectra") + " finished · " + job.state;
          var final = job.state === "done" || job.state === "failed";
          if (final) {
            if (box.getAttribute("data-on-final") === "refresh" && !document.getElementById("job-results")) {
              location.reload();       /* the sample page: show the new fit */
              return;
            }
            refreshResults(true);
            return;
          }
          if (String(job.progress.done) !== String(lastDone)) {
            lastDone = job.progress.done;
            refreshResults(false);
          }
          delay = Math.min(delay * 1.3, 3000);
          setTimeout(poll, delay);
        })
        .catch(function () { setTimeout(poll, 3000); });
    }
    setTimeout(poll, delay);
  }

  /* ------------------------------------------------------------ the report frame */
  function setupReportFrame() {
    var frame = document.querySelector(".report-frame");
    if (!frame) { return; }
    function fit() {
      try {
        var doc = frame.contentDocument;
        if (!doc || !doc.body) { return; }
        var h = Math.max(doc.documentElement.scrollHeight, doc.body.scrollHeight);
        if (h > 200) { frame.style.height = (h + 8) + "px"; }
      } catch (e) { /* another origin: keep the fixed height */ }
    }
    frame.addEventListener("load", function () {
      fit();
      try {
        var doc = frame.contentDocument;
        if (window.ResizeObserver && doc && doc.body) {
          new ResizeObserver(fit).observe(doc.body);
        }
        /* details opened inside the report change its height */
        doc.addEventListener("toggle", fit, true);
      } catch (e) { /* keep the fixed height */ }
    });
  }

  /* ------------------------------------------------------------ trend plot */
  function setupTrend() {
    var div = document.querySelector("[data-figure]");
    if (div) {
      var src = document.getElementById(div.getAttribute("data-figure"));
      if (!window.Plotly) {
        div.appendChild(el("p", "alert", "The plot needs plotly.js, which did not load."));
      } else if (src) {
        var fig = JSON.parse(src.textContent);
        window.Plotly.newPlot(div, fig.data, fig.layout, {
          responsive: true, displaylogo: false,
          modeBarButtonsToRemove: ["lasso2d", "select2d"],
          toImageButtonOptions: {format: "svg", filename: "edgefit-trend"}
        });
      }
    }
    document.querySelectorAll("select[data-autosubmit]").forEach(function (s) {
      s.addEventListener("change", function () { s.form.submit(); });
    });
  }

  function start() {
    setupUpload();
    setupProgress();
    setupReportFrame();
    setupTrend();
  }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else { start(); }
})();
