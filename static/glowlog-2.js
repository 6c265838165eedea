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

// Analysis route on the forms: the whole-fit options are disabled (and
// so not sent) while the route is line by line; without a script they
// are sent and refused then, with a message.
(function () {
  function sync(fs) {
    var sel = fs.querySelector('[data-route-model]');
    var opts = fs.querySelector('[data-whole-options]');
    if (!sel || !opts) {
      return;
    }
    var route = sel.value || fs.getAttribute('data-route-default');
    // The default route is line by line for Voigt-shaped lines.
    var shape = fs.form && fs.form.querySelector('select[name=line_shape]');
    if (!sel.value && shape && shape.value === 'voigt') {
      route = 'lines';
    }
    opts.disabled = route !== 'whole';
  }
  function all() {
    Array.prototype.forEach.call(document.querySelectorAll('fieldset.route'), sync);
  }
  document.addEventListener('change', function (ev) {
    var fs = ev.target.closest && ev.target.closest('fieldset.route');
    if (fs && ev.target.hasAttribute('data-route-model')) {
      sync(fs);
    } else if (ev.target.name === 'line_shape') {
      all();
    }
  });
  if (document.readyState === 'loading') {
    document.addEventListener('DOMContentLoaded', all);
  } else {
    all();
  }
})();

// Whole-spectrum fit figure: the zoom links and a drag across the figure
// fetch the server-drawn figure of that range and put it in place (the
// links work without a script: they reload the page at that range).
(function () {
  function figureOf(el) {
    return el.closest && el.closest('figure.whole-fit-figure');
  }
  function load(fig, url, current) {
    var box = fig.querySelector('.whole-fit-svg');
    box.classList.add('loading');
    fetch(url, { credentials: 'same-origin' }).then(function (r) {
      if (!r.ok) {
        throw new Error(String(r.status));
      }
      return r.text();
    }).then(function (text) {
      var doc = new DOMParser().parseFromString(text, 'image/svg+xml');
      var svg = doc.documentElement;
      if (!svg || svg.nodeName.toLowerCase() !== 'svg') {
        throw new Error('not an SVG');
      }
      svg.setAttribute('width', '100%');
      svg.removeAttribute('height');
      var old = box.querySelector('svg');
      box.replaceChild(document.importNode(svg, true), old);
      Array.prototype.forEach.call(fig.querySelectorAll('.zoom-link'), function (a) {
        a.classList.toggle('current', a === current);
        a.setAttribute('aria-current', a === current ? 'true' : 'false');
      });
      var dl = fig.querySelector('figcaption a[download]');
      if (dl) {
        dl.setAttribute('href', url);
      }
    }).catch(function () {
      window.location.href = current ? current.href : url;
    }).finally(function () {
      box.classList.remove('loading');
    });
  }
  document.addEventListener('click', function (ev) {
    var a = ev.target.closest && ev.target.closest('a.zoom-link[data-svg]');
    if (!a || ev.button !== 0 || ev.ctrlKey || ev.metaKey || ev.shiftKey) {
      return;
    }
    var fig = figureOf(a);
    if (!fig) {
      return;
    }
    ev.preventDefault();
    load(fig, a.getAttribute('data-svg'), a);
  });

  // Drag to zoom (mouse or pen; touch keeps scrolling the page).
  var drag = null;
  function userX(svg, clientX, clientY) {
    var m = svg.getScreenCTM();
    if (!m) {
      return null;
    }
    var pt = svg.createSVGPoint();
    pt.x = clientX;
    pt.y = clientY;
    return pt.matrixTransform(m.inverse()).x;
  }
  function wavelength(svg, ux) {
    var px0 = parseFloat(svg.getAttribute('data-px0')), px1 = parseFloat(svg.getAttribute('data-px1'));
    var x0 = parseFloat(svg.getAttribute('data-x0')), x1 = parseFloat(svg.getAttribute('data-x1'));
    if (!(px1 > px0) || !(x1 > x0)) {
      return null;
    }
    return x0 + (ux - px0) / (px1 - px0) * (x1 - x0);
  }
  document.addEventListener('pointerdown', function (ev) {
    if (ev.pointerType === 'touch' || ev.button !== 0) {
      return;
    }
    var box = ev.target.closest && ev.target.closest('.whole-fit-svg.zoomable');
    var svg = box && box.querySelector('svg');
    if (!svg) {
      return;
    }
    var rect = box.getBoundingClientRect();
    var sel = document.createElement('div');
    sel.className = 'zoom-sel';
    sel.style.left = (ev.clientX - rect.left) + 'px';
    sel.style.width = '0px';
    box.appendChild(sel);
    drag = { box: box, svg: svg, startX: ev.clientX, startY: ev.clientY, sel: sel };
    ev.preventDefault();
  });
  document.addEventListener('pointermove', function (ev) {
    if (!drag) {
      return;
    }
    var rect = drag.box.getBoundingClientRect();
    var a = Math.min(drag.startX, ev.clientX) - rect.left, b = Math.max(drag.startX, ev.clientX) - rect.left;
    drag.sel.style.left = a + 'px';
    drag.sel.style.width = (b - a) + 'px';
  });
  document.addEventListener('pointerup', function (ev) {
    if (!drag) {
      return;
    }
    var d = drag;
    drag = null;
    d.sel.remove();
    if (Math.abs(ev.clientX - d.startX) < 8) {
      return; // a click, not a drag
    }
    var lo = wavelength(d.svg, userX(d.svg, Math.min(d.startX, ev.clientX), d.startY));
    var hi = wavelength(d.svg, userX(d.svg, Math.max(d.startX, ev.clientX), d.startY));
    if (lo === null || hi === null || !(hi > lo)) {
      return;
    }
    var fig = figureOf(d.box);
    var url = new URL(fig.getAttribute('data-svg-base'), window.location.href);
    url.searchParams.set('lo', lo.toFixed(4));
    url.searchParams.set('hi', hi.toFixed(4));
    load(fig, url.pathname + url.search, null);
  });
  function init() {
    Array.prototype.forEach.call(document.querySelectorAll('figure.whole-fit-figure .whole-fit-svg'), function (box) {
      box.classList.add('zoomable');
      var hint = box.parentNode.querySelector('.drag-hint');
      if (hint) {
        hint.hidden = false;
      }
    });
  }
  if (document.readyState === 'loading') {
    document.addEventListener('DOMContentLoaded', init);
  } else {
    init();
  }
})();
