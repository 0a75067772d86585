// hingeword web page: print buttons and the scan's progress (the page works without it).
"use strict";
document.addEventListener("DOMContentLoaded", function () {
  document.querySelectorAll("[data-print]").forEach(function (b) {
    b.addEventListener("click", function () { window.print(); });
  });
  var box = document.getElementById("progress");
  if (!box) { return; }
  var bar = document.getElementById("progress-bar");
  var label = document.getElementById("progress-label");
  var text = document.getElementById("progress-text");
  function poll() {
    fetch(box.getAttribute("data-url"), { credentials: "same-origin", cache: "no-store" })
      .then(function (r) { return r.json(); })
      .then(function (job) {
        if (job.state !== "running") { window.location.reload(); return; }
        label.textContent = job.stage_number ? "Scanning: step " + job.stage_number + " of " + job.stages : "Scanning";
        if (job.total) { bar.max = job.total; bar.value = job.done; } else { bar.removeAttribute("value"); }
        text.textContent = job.stage_label + (job.total ? ": " + job.done + " of " + job.total + " essays" : "") + "…";
        window.setTimeout(poll, 1000);
      })
      .catch(function () { window.setTimeout(poll, 3000); });
  }
  window.setTimeout(poll, 800);
});
