(function () {
  "use strict";
  // ffaudit report: sort and filter the molecule table; mark a term's atoms and bonds on hover.
  // Marks on <html>: data-script="ready" once set up, data-script="error" if anything failed.
  var root = document.documentElement;
  function failed(message) {
    root.setAttribute("data-script", "error");
    var box = document.getElementById("script-status");
    if (box) {
      box.hidden = false;
      box.textContent = "The page script failed (" + message + "): sorting, filtering and hover " +
        "marks may not work; everything else is plain HTML.";
    }
  }
  window.addEventListener("error", function (event) { failed(event.message); });
  function each(list, fn) { Array.prototype.forEach.call(list, fn); }

  function setUpTable() {
    var table = document.getElementById("molecules");
    if (!table) { return; }
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var headers = table.tHead.rows[0].cells;
    var filter = document.getElementById("filter");
    var status = document.getElementById("status-filter");
    var counter = document.getElementById("rows-shown");
    function value(row, column) {
      var cell = row.cells[column];
      return cell.hasAttribute("data-sort") ? cell.getAttribute("data-sort") : cell.textContent;
    }
    each(headers, function (th, column) {
      var button = th.querySelector("button");
      if (!button) { return; }
      button.addEventListener("click", function () {
        var numeric = th.getAttribute("data-type") === "number";
        var ascending = th.getAttribute("aria-sort") !== "ascending";
        each(headers, function (h) { h.removeAttribute("aria-sort"); });
        th.setAttribute("aria-sort", ascending ? "ascending" : "descending");
        rows.sort(function (a, b) {
          var x = value(a, column), y = value(b, column), c;
          c = numeric ? parseFloat(x) - parseFloat(y) : x.localeCompare(y);
          if (c === 0 || isNaN(c)) {
            c = parseInt(a.getAttribute("data-index"), 10) - parseInt(b.getAttribute("data-index"), 10);
          }
          return ascending ? c : -c;
        });
        var fragment = document.createDocumentFragment();
        rows.forEach(function (row) { fragment.appendChild(row); });
        body.appendChild(fragment);
      });
    });
    function apply() {
      var text = filter.value.trim().toLowerCase();
      var wanted = status.value;
      var shown = 0;
      rows.forEach(function (row) {
        var match = (!text || row.getAttribute("data-text").indexOf(text) >= 0) &&
          (!wanted || row.getAttribute("data-status") === wanted);
        row.hidden = !match;
        if (match) { shown += 1; }
      });
      counter.textContent = shown + " of " + rows.length + " rows shown";
    }
    filter.addEventListener("input", apply);
    status.addEventListener("change", apply);
    apply();
  }

  function setUpHover() {
    each(document.querySelectorAll("tr[data-figure]"), function (row) {
      var figure = document.getElementById(row.getAttribute("data-figure"));
      if (!figure) { return; }
      var selectors = [];
      (row.getAttribute("data-atoms") || "").split(" ").forEach(function (a) {
        if (a) { selectors.push("ellipse.atom-" + a); }
      });
      (row.getAttribute("data-bonds") || "").split(" ").forEach(function (b) {
        if (b) { selectors.push(".bond-" + b); }
      });
      if (!selectors.length) { return; }
      var selector = selectors.join(", ");
      function mark(on) {
        each(figure.querySelectorAll(selector), function (element) {
          element.classList.toggle("hover-mark", on);
        });
        row.classList.toggle("hovered", on);
      }
      row.addEventListener("mouseenter", function () { mark(true); });
      row.addEventListener("mouseleave", function () { mark(false); });
      row.addEventListener("focus", function () { mark(true); });
      row.addEventListener("blur", function () { mark(false); });
    });
  }

  try {
    setUpTable();
    setUpHover();
    if (root.getAttribute("data-script") !== "error") { root.setAttribute("data-script", "ready"); }
  } catch (error) {
    failed(String(error && error.message ? error.message : error));
  }
}());
