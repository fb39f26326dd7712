{# Included inline by report.html.j2; static: no value from the results. #}
/* Sort and filter the "All checks" table; without scripts the table is complete. */
(function () {
  "use strict";
  var table = document.getElementById("all-checks");
  var controls = document.getElementById("check-controls");
  if (!table || !controls) { return; }
  var body = table.tBodies[0];
  var rows = Array.prototype.slice.call(body.rows);
  var selects = Array.prototype.slice.call(controls.querySelectorAll("select"));
  var count = document.getElementById("f-count");
  var state = { key: null, dir: 1 };
  function filter() {
    var shown = 0;
    rows.forEach(function (row) {
      var ok = selects.every(function (s) {
        return !s.value || row.getAttribute("data-" + s.getAttribute("data-key")) === s.value;
      });
      row.hidden = !ok;
      if (ok) { shown += 1; }
    });
    count.textContent = shown + " of " + rows.length + " checks shown";
  }
  function value(row, key) {
    if (key === "ratio") {
      var r = parseFloat(row.getAttribute("data-ratio"));
      return isNaN(r) ? -Infinity : r;
    }
    return row.getAttribute("data-" + key) || "";
  }
  function sortBy(key) {
    state.dir = state.key === key ? -state.dir : (key === "ratio" ? -1 : 1);
    state.key = key;
    var indexed = rows.map(function (row, i) { return [row, i]; });
    indexed.sort(function (a, b) {
      var x = value(a[0], key), y = value(b[0], key), c;
      if (typeof x === "number") { c = x === y ? 0 : (x < y ? -1 : 1); }
      else { c = x.localeCompare(y, undefined, { numeric: true }); }
      return c !== 0 ? state.dir * c : a[1] - b[1];
    });
    indexed.forEach(function (pair) { body.appendChild(pair[0]); });
    Array.prototype.forEach.call(table.tHead.querySelectorAll("th[data-sort]"), function (th) {
      th.setAttribute("aria-sort", th.getAttribute("data-sort") === key
        ? (state.dir > 0 ? "ascending" : "descending") : "none");
    });
  }
  Array.prototype.forEach.call(table.tHead.querySelectorAll("th[data-sort] button"), function (b) {
    b.addEventListener("click", function () { sortBy(b.parentNode.getAttribute("data-sort")); });
  });
  selects.forEach(function (s) { s.addEventListener("change", filter); });
  controls.hidden = false;
  filter();
  /* a link into the closed appendix opens it */
  Array.prototype.forEach.call(document.querySelectorAll('a[href^="#src-"]'), function (a) {
    a.addEventListener("click", function () {
      var target = document.getElementById(a.getAttribute("href").slice(1));
      var box = target && target.closest("details");
      if (box) { box.open = true; }
    });
  });
}());
