// Sorting and filtering of the channel tables. Without this script the tables are plain
// and complete; with it, each column header sorts and the controls above filter.
(function () {
  "use strict";
  function key(tb, col, kind) {
    var cell = tb.rows[0].cells[col];
    var v = cell.getAttribute("data-v");
    if (v === null) { v = cell.textContent.trim(); }
    if (kind === "num" || col === 0) {
      var x = parseFloat(v);
      return isNaN(x) ? null : x;
    }
    return v.toLowerCase();
  }
  document.querySelectorAll("table.channels").forEach(function (table) {
    var heads = table.tHead.rows[0].cells;
    Array.prototype.forEach.call(heads, function (th, col) {
      var kind = th.getAttribute("data-kind");
      var b = document.createElement("button");
      b.type = "button";
      b.className = "sort";
      b.textContent = th.textContent;
      th.textContent = "";
      th.appendChild(b);
      b.addEventListener("click", function () {
        var dir = th.getAttribute("aria-sort") === "ascending" ? -1 : 1;
        Array.prototype.forEach.call(heads, function (h) { h.removeAttribute("aria-sort"); });
        th.setAttribute("aria-sort", dir === 1 ? "ascending" : "descending");
        var bodies = Array.prototype.slice.call(table.tBodies);
        bodies.sort(function (a, c) {
          var x = key(a, col, kind), y = key(c, col, kind);
          if (x === y) { return 0; }
          if (x === null) { return 1; }
          if (y === null) { return -1; }
          return (x < y ? -1 : 1) * dir;
        });
        bodies.forEach(function (tb) { table.appendChild(tb); });
      });
    });
    var controls = document.querySelector('.controls[data-for="' + table.id + '"]');
    if (!controls) { return; }
    controls.hidden = false;
    var text = controls.querySelector("input");
    var status = controls.querySelector("select");
    var out = controls.querySelector("output");
    function apply() {
      var q = text.value.trim().toLowerCase(), s = status.value, shown = 0;
      Array.prototype.forEach.call(table.tBodies, function (tb) {
        var ok = (!s || tb.getAttribute("data-status") === s) &&
          (!q || tb.getAttribute("data-search").indexOf(q) !== -1);
        tb.hidden = !ok;
        if (ok) { shown += 1; }
      });
      out.textContent = shown + " of " + table.tBodies.length + " channels shown";
    }
    text.addEventListener("input", apply);
    status.addEventListener("change", apply);
    apply();
  });
})();
