// crossform report: table sorting and filtering, proposal filters. No network, no storage.
(function () {
  "use strict";
  function cellValue(row, i, numeric) {
    var c = row.cells[i];
    if (!c) { return numeric ? NaN : ""; }
    if (numeric) {
      var v = parseFloat(c.getAttribute("data-v"));
      return isNaN(v) ? -Infinity : v;
    }
    return c.textContent.trim().toLowerCase();
  }
  document.querySelectorAll("table.sortable").forEach(function (table) {
    var heads = table.tHead.rows[0].cells;
    Array.prototype.forEach.call(heads, function (th, i) {
      var b = th.querySelector("button[data-sort]");
      if (!b) { return; }
      b.addEventListener("click", function () {
        var numeric = b.getAttribute("data-sort") === "num";
        var asc = th.getAttribute("aria-sort") !== "ascending";
        Array.prototype.forEach.call(heads, function (h) { h.removeAttribute("aria-sort"); });
        th.setAttribute("aria-sort", asc ? "ascending" : "descending");
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        rows.sort(function (a, b) {
          var x = cellValue(a, i, numeric), y = cellValue(b, i, numeric);
          var r = x < y ? -1 : x > y ? 1 : 0;
          return asc ? r : -r;
        });
        rows.forEach(function (r) { body.appendChild(r); });
      });
    });
  });
  function countRows(id) {
    var table = document.getElementById(id);
    var out = document.querySelector('[data-count-for="' + id + '"]');
    if (!table || !out) { return; }
    var all = table.tBodies[0].rows.length, shown = 0;
    Array.prototype.forEach.call(table.tBodies[0].rows, function (r) { if (!r.hidden) { shown++; } });
    out.textContent = shown === all ? all + " rows" : shown + " of " + all + " rows";
  }
  document.querySelectorAll("input.filter").forEach(function (input) {
    var id = input.getAttribute("data-target");
    countRows(id);
    input.addEventListener("input", function () {
      var q = input.value.trim().toLowerCase();
      var table = document.getElementById(id);
      Array.prototype.forEach.call(table.tBodies[0].rows, function (r) {
        r.hidden = q !== "" && r.textContent.toLowerCase().indexOf(q) < 0;
      });
      countRows(id);
    });
  });
  var filters = document.querySelectorAll("select.pfilter");
  var cards = document.querySelectorAll("article.card");
  function applyCards() {
    var shown = 0;
    cards.forEach(function (c) {
      var ok = true;
      filters.forEach(function (f) {
        var v = f.value;
        if (v && c.getAttribute("data-" + f.getAttribute("data-key")) !== v) { ok = false; }
      });
      c.hidden = !ok;
      if (ok) { shown++; }
    });
    var out = document.getElementById("proposal-count");
    if (out) { out.textContent = shown + " of " + cards.length + " rules"; }
  }
  filters.forEach(function (f) { f.addEventListener("change", applyCards); });
  applyCards();
})();
