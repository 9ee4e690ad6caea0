// sitegen: sort a table by a column when its heading is selected (no server, no library).
(function () {
  "use strict";
  document.documentElement.classList.add("scripts-on");
  function cellValue(row, column) {
    var cell = row.children[column];
    var text = cell ? cell.textContent.trim() : "";
    var number = parseFloat(text.replace(/\u2212/g, "-").replace(/,/g, ""));
    return isNaN(number) ? { text: text.toLowerCase(), number: null } : { text: text, number: number };
  }
  function compare(a, b) {
    if (a.number !== null && b.number !== null) { return a.number - b.number; }
    if (a.number !== null) { return -1; }
    if (b.number !== null) { return 1; }
    return a.text < b.text ? -1 : a.text > b.text ? 1 : 0;
  }
  function sortBy(table, column, heading) {
    var body = table.tBodies[0];
    var ascending = heading.getAttribute("aria-sort") !== "ascending";
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (r1, r2) {
      var order = compare(cellValue(r1, column), cellValue(r2, column));
      return ascending ? order : -order;
    });
    rows.forEach(function (row) { body.appendChild(row); });
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th) { th.removeAttribute("aria-sort"); });
    heading.setAttribute("aria-sort", ascending ? "ascending" : "descending");
  }
  Array.prototype.forEach.call(document.querySelectorAll("table.sortable"), function (table) {
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (heading, column) {
      var button = document.createElement("button");
      button.type = "button";
      button.className = "sort-button";
      button.textContent = heading.textContent;
      button.addEventListener("click", function () { sortBy(table, column, heading); });
      heading.textContent = "";
      heading.appendChild(button);
    });
  });
}());
