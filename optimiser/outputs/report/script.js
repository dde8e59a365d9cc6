(function () {
  function key(td) {
    var k = td ? td.getAttribute('data-sort') : null;
    if (k !== null && k !== '' && !isNaN(Number(k))) return Number(k);
    return td ? td.textContent.trim().toLowerCase() : '';
  }
  function sortBy(th) {
    var row = th.parentNode, table = th.closest('table'), body = table.tBodies[0];
    var col = Array.prototype.indexOf.call(row.children, th);
    var up = th.getAttribute('aria-sort') !== 'ascending';
    Array.prototype.forEach.call(row.children, function (h) { h.removeAttribute('aria-sort'); });
    th.setAttribute('aria-sort', up ? 'ascending' : 'descending');
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (a, b) {
      var x = key(a.cells[col]), y = key(b.cells[col]);
      var c = (typeof x === 'number' && typeof y === 'number') ? x - y
        : String(x).localeCompare(String(y));
      return up ? c : -c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  }
  document.querySelectorAll('table.sortable thead tr:last-child th').forEach(function (th) {
    th.tabIndex = 0;
    th.addEventListener('click', function () { sortBy(th); });
    th.addEventListener('keydown', function (e) { if (e.key === 'Enter') sortBy(th); });
  });
  window.addEventListener('beforeprint', function () {
    document.querySelectorAll('details').forEach(function (d) { d.open = true; });
  });
})();
