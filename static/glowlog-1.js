// glowlog's own script: nothing inline (CSP script-src 'self').

// Typed line table: "Add a line" and "×" work in place when scripts run;
// without a script the same buttons submit the form, which comes back
// with a row more or less.
(function () {
  function renumber(tbody) {
    Array.prototype.forEach.call(tbody.rows, function (tr, i) {
      var rm = tr.querySelector('[data-lt-remove]');
      if (rm) {
        rm.value = String(i);
        rm.setAttribute('aria-label', 'remove row ' + (i + 1));
      }
      Array.prototype.forEach.call(tr.querySelectorAll('[aria-label]'), function (el) {
        el.setAttribute('aria-label', el.getAttribute('aria-label').replace(/row \d+/, 'row ' + (i + 1)));
      });
    });
  }
  document.addEventListener('click', function (ev) {
    var add = ev.target.closest && ev.target.closest('[data-lt-add]');
    var rm = ev.target.closest && ev.target.closest('[data-lt-remove]');
    if (!add && !rm) {
      return;
    }
    var fs = (add || rm).closest('fieldset.line-table');
    var tbody = fs && fs.querySelector('tbody');
    if (!tbody || tbody.rows.length === 0) {
      return;
    }
    ev.preventDefault();
    if (add) {
      var row = tbody.rows[tbody.rows.length - 1].cloneNode(true);
      Array.prototype.forEach.call(row.querySelectorAll('input, select'), function (el) { el.value = ''; });
      tbody.appendChild(row);
      renumber(tbody);
      var first = row.querySelector('select, input');
      if (first) {
        first.focus();
      }
    } else {
      var tr = rm.closest('tr');
      if (tbody.rows.length > 1) {
        tr.remove();
      } else {
        Array.prototype.forEach.call(tr.querySelectorAll('input, select'), function (el) { el.value = ''; });
      }
      renumber(tbody);
    }
  });
})();
