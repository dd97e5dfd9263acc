// Optional column sorting for the adviser overview (progressive enhancement:
// the table is complete and usefully ordered without it). Each sortable
// header gets a button; cells carry their raw value in data-value.
(function () {
  'use strict';
  function valueOf(row, index, numeric) {
    var cell = row.children[index];
    var raw = cell ? cell.getAttribute('data-value') || '' : '';
    if (!numeric) return raw.toLowerCase();
    return raw === '' ? Number.NEGATIVE_INFINITY : Number(raw);
  }
  function enhance(table) {
    var headers = table.querySelectorAll('thead th[data-sort]');
    Array.prototype.forEach.call(headers, function (header, index) {
      var button = document.createElement('button');
      button.type = 'button';
      button.textContent = header.textContent;
      header.textContent = '';
      header.appendChild(button);
      button.addEventListener('click', function () {
        var numeric = header.getAttribute('data-sort') === 'number';
        var ascending = header.getAttribute('aria-sort') !== 'ascending';
        Array.prototype.forEach.call(headers, function (other) { other.removeAttribute('aria-sort'); });
        header.setAttribute('aria-sort', ascending ? 'ascending' : 'descending');
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        rows.sort(function (a, b) {
          var x = valueOf(a, index, numeric);
          var y = valueOf(b, index, numeric);
          var order = x < y ? -1 : x > y ? 1 : 0;
          return ascending ? order : -order;
        });
        rows.forEach(function (row) { body.appendChild(row); });
      });
    });
  }
  Array.prototype.forEach.call(document.querySelectorAll('table.sortable'), enhance);
})();
