(function () {
  "use strict";
  var main = document.getElementById("main");
  var nav = document.getElementById("nav");
  var live = document.getElementById("live");
  // A changed menu of the search form searches at once.
  var form = document.querySelector("form[role=search]");
  if (form) {
    form.addEventListener("change", function (e) { if (e.target.tagName === "SELECT") { form.submit(); } });
  }
  if (!window.EventSource) { live.textContent = "no live updates: this browser lacks EventSource"; return; }
  var es = new EventSource("/events?bundle=" + encodeURIComponent(main.getAttribute("data-bundle")));
  var seq = 0;
  es.onopen = function () { live.textContent = "live: this page refreshes after each rebuild"; };
  es.onerror = function () { live.textContent = "lost kbc watch; retrying…"; };
  es.addEventListener("reload", function () {
    var mine = ++seq;
    fetch(main.getAttribute("data-part"), { cache: "no-store" })
      .then(function (r) { if (!r.ok && r.status !== 404) { throw new Error("HTTP " + r.status); } return r.text(); })
      .then(function (html) {
        if (mine !== seq) { return; }
        main.innerHTML = html;
        var next = document.getElementById("nav-next");
        if (next) { nav.innerHTML = next.innerHTML; }
        live.textContent = "live: rebuilt at " + new Date().toLocaleTimeString();
      })
      .catch(function (e) { live.textContent = "refresh failed: " + e.message; });
  });
})();
