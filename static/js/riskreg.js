// riskreg: small progressive enhancements. Everything works without script;
// with it, the rating form shows only the chosen method's parameters and the
// required level as the choices are made (computed by the server's
// engineering core, the same code that stores it on save).
(function () {
  "use strict";

  var FIELDS = {
    iso13849: { severity: "s", frequency: "f", avoidance: "p" },
    iec62061: { severity: "se", frequency: "fr", probability: "pr", avoidance: "av" },
    ansi_b11: { severity: "b11_severity", probability: "b11_probability" }
  };

  function checked(form, name) {
    var el = form.querySelector('input[name="' + name + '"]:checked');
    return el ? el.value : "";
  }

  function setupRating(section) {
    var form = section.closest("form");
    var out = section.querySelector("#live-level");
    var note = section.querySelector("#live-note");
    var url = section.getAttribute("data-preview-url");
    var machine = section.getAttribute("data-machine");
    var seq = 0;

    function method() {
      return checked(form, "method") || "iso13849";
    }

    function showParams() {
      var m = method();
      section.querySelectorAll(".params").forEach(function (p) {
        p.hidden = p.getAttribute("data-method") !== m;
      });
    }

    function show(level, text) {
      out.textContent = level || "choose below";
      out.className = "level " + (level ? "level-" + level.toLowerCase().replace(/ /g, "-") : "level-none");
      if (level && level.length === 1) { out.textContent = "PL " + level; }
      note.textContent = text || "";
    }

    function update() {
      var m = method();
      var map = FIELDS[m];
      var q = new URLSearchParams({ method: m, machine: machine });
      var missing = [];
      Object.keys(map).forEach(function (key) {
        var v = checked(form, map[key]);
        if (v) { q.set(key, v); } else { missing.push(key); }
      });
      if (missing.length) {
        show("", "Still to choose: " + missing.join(", ") + ".");
        out.textContent = "choose below";
        return;
      }
      var mine = ++seq;
      fetch(url + "?" + q.toString(), { credentials: "same-origin", headers: { Accept: "application/json" } })
        .then(function (r) { return r.json(); })
        .then(function (data) {
          if (mine !== seq) { return; }
          if (!data.level) { show("", "Still to choose: " + (data.missing || []).join(", ") + "."); return; }
          show(data.level, (data.steps || []).join("; "));
        })
        .catch(function () { show("", "Shown when saved (no connection to the server)."); });
    }

    form.addEventListener("change", function (ev) {
      if (ev.target && ev.target.name === "method") { showParams(); }
      update();
    });
    showParams();
    update();
  }

  document.addEventListener("DOMContentLoaded", function () {
    document.querySelectorAll("section.rating[data-preview-url]").forEach(setupRating);
  });
})();
