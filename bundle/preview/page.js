(function () {
  "use strict";
  var results = document.getElementById("results");
  var live = document.getElementById("live");
  if (!window.EventSource) { live.textContent = "no live updates: this browser lacks EventSource"; return; }
  var es = new EventSource("/events?bundle=" + encodeURIComponent(results.getAttribute("data-bundle")));
  var seq = 0;
  es.onopen = function () { live.textContent = "live: results refresh after each rebuild"; };
  es.onerror = function () { live.textContent = "lost kbc watch; retrying…"; };
  es.addEventListener("reload", function () {
    var mine = ++seq;
    fetch("/results?q=" + encodeURIComponent(results.getAttribute("data-query")), { cache: "no-store" })
      .then(function (r) { if (!r.ok) { throw new Error("HTTP " + r.status); } return r.text(); })
      .then(function (html) {
        if (mine !== seq) { return; }
        results.innerHTML = html;
        live.textContent = "live: rebuilt at " + new Date().toLocaleTimeString();
      })
      .catch(function (e) { live.textContent = "refresh failed: " + e.message; });
  });
})();
