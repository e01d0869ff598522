// The walk-round form: each tap is time-stamped and kept in this browser's local storage until
// "Start a new visit"; "Save results" downloads a CSV in the columns `recordkit import` reads.
(function () {
  "use strict";
  var unit = document.body.getAttribute("data-unit");
  var key = "recordkit-walkround:" + unit;
  var state = load();

  function load() {
    try {
      var kept = JSON.parse(localStorage.getItem(key) || "null");
      if (kept && Array.isArray(kept.taps) && typeof kept.notes === "object") return kept;
    } catch (e) { /* a damaged entry starts a new visit */ }
    return { by: "", taps: [], notes: {} };
  }
  function keep() { localStorage.setItem(key, JSON.stringify(state)); }

  function pad(n) { return (n < 10 ? "0" : "") + n; }
  function stamp(d) {  // local time, as the person standing there reads it
    return d.getFullYear() + "-" + pad(d.getMonth() + 1) + "-" + pad(d.getDate()) + " " +
      pad(d.getHours()) + ":" + pad(d.getMinutes()) + ":" + pad(d.getSeconds());
  }
  var WORDS = { "test pass": "Test passed", "test fail": "Test failed", "battery ": "Battery changed",
                "clean ": "Cleaned", "replace ": "Replaced", "note ": "Note" };

  function render() {
    var sections = document.querySelectorAll(".wr-device");
    for (var i = 0; i < sections.length; i++) {
      var section = sections[i], device = section.getAttribute("data-device");
      var list = section.querySelector(".wr-taps");
      list.textContent = "";
      state.taps.forEach(function (tap, index) {
        if (tap.device !== device) return;
        var item = document.createElement("li");
        item.textContent = tap.time.slice(11, 16) + " " + WORDS[tap.action + " " + (tap.result || "")];
        var undo = document.createElement("button");
        undo.type = "button";
        undo.textContent = "Remove";
        undo.setAttribute("aria-label", "Remove " + item.textContent);
        undo.addEventListener("click", function () { state.taps.splice(index, 1); keep(); render(); });
        item.appendChild(undo);
        list.appendChild(item);
      });
      section.querySelector("textarea").value = state.notes[device] || "";
    }
    document.getElementById("wr-by").value = state.by || "";
    var n = state.taps.length;
    document.getElementById("wr-summary").textContent = n ? n + " result(s) kept in this browser" +
      (state.saved ? "; last saved " + state.saved : "; not saved yet") : "Nothing recorded yet.";
  }

  document.addEventListener("click", function (event) {
    var button = event.target.closest ? event.target.closest("button[data-action]") : null;
    if (!button) return;
    var section = button.closest(".wr-device");
    state.taps.push({ device: section.getAttribute("data-device"), action: button.getAttribute("data-action"),
                      result: button.getAttribute("data-result") || "", time: stamp(new Date()) });
    keep();
    render();
  });
  document.addEventListener("input", function (event) {
    if (event.target.id === "wr-by") state.by = event.target.value;
    var section = event.target.closest ? event.target.closest(".wr-device") : null;
    if (section && event.target.tagName === "TEXTAREA") state.notes[section.getAttribute("data-device")] = event.target.value;
    keep();
  });

  // CSV as the events export writes it (RFC 4180; a text a spreadsheet would run as a formula gets an
  // apostrophe in front, which the import takes off again).
  function guard(text) {
    if (/^[=+\-@\t\r]/.test(text) || /^'[=+\-@\t\r']/.test(text)) return "'" + text;
    return text;
  }
  function cell(text) { return /[",\r\n]/.test(text) ? '"' + text.replace(/"/g, '""') + '"' : text; }
  function csv() {
    var rows = [["date", "device", "action", "result", "by", "note", "evidence"]];
    var last = {};
    state.taps.forEach(function (tap, index) { last[tap.device] = index; });
    state.taps.forEach(function (tap, index) {
      var note = last[tap.device] === index ? (state.notes[tap.device] || "") : "";
      rows.push([tap.time, tap.device, tap.action, tap.result, guard(state.by || ""), guard(note), ""]);
    });
    Object.keys(state.notes).forEach(function (device) {
      if (state.notes[device] && last[device] === undefined)
        rows.push([stamp(new Date()), device, "note", "", guard(state.by || ""), guard(state.notes[device]), ""]);
    });
    return rows.map(function (row) { return row.map(cell).join(","); }).join("\r\n") + "\r\n";
  }

  document.getElementById("wr-save").addEventListener("click", function () {
    var now = new Date();
    var link = document.createElement("a");
    link.href = URL.createObjectURL(new Blob([csv()], { type: "text/csv" }));
    link.download = document.body.getAttribute("data-file") + "-" + stamp(now).slice(0, 10) + ".csv";
    document.body.appendChild(link);
    link.click();
    link.remove();
    state.saved = stamp(now).slice(11, 16);
    keep();
    render();
  });
  document.getElementById("wr-clear").addEventListener("click", function () {
    if (state.taps.length && !state.saved && !window.confirm("Nothing has been saved. Clear these results?")) return;
    state = { by: state.by, taps: [], notes: {} };
    keep();
    render();
  });
  render();
}());
