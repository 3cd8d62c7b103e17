/* Turnback accessibility (our own): the page language, the view tabs as an ARIA tab list usable by keyboard,
   names for controls that carry none, and option lists whose options are plain labels of native inputs. */
(function () {
  var NAMES = {
    'meeting-toggle': 'Meeting view',
    'plan-form-load-kind': 'Kind of external load',
    'plan-form-clear-rule': 'When the lake counts as clear',
    'plan-prec-scenario': 'Scenario whose variability is used',
    'plan-saved-list': 'Saved plans',
    'map-axis': 'Lake property up the side of the map',
    'lake-model': 'Lake model',
    'plan-both-models': 'Run under both lake models',
    'region-exponent': 'Recycling exponent the regions of the plane are drawn for',
  };
  //: upload box -> the name of its file input
  var FILES = {
    'record-upload': 'Monitoring CSV file',
    'region-lakes-upload': 'LAKES.csv: the region\'s lake table',
    'region-records-upload': 'RECORDS.csv: the lakes\' yearly records',
  };
  function set(el, name, value) { if (el.getAttribute(name) !== value) { el.setAttribute(name, value); } }
  function names() {
    set(document.documentElement, 'lang', 'en');
    Object.keys(NAMES).forEach(function (id) {
      var list = document.getElementById(id);
      if (!list) { return; }
      var radio = list.querySelector('input[type="radio"]');
      if (list.getAttribute('role') !== (radio ? 'radiogroup' : 'group')) {
        list.setAttribute('role', radio ? 'radiogroup' : 'group');
      }
      if (list.getAttribute('aria-label') !== NAMES[id]) { list.setAttribute('aria-label', NAMES[id]); }
      list.querySelectorAll('[role="option"], [aria-selected]').forEach(function (o) {
        o.removeAttribute('role'); o.removeAttribute('aria-selected');
      });
    });
    var slider = document.getElementById('load-slider');
    if (slider) {
      slider.querySelectorAll('[role="slider"]').forEach(function (t) {
        if (!t.getAttribute('aria-label')) { t.setAttribute('aria-label', 'Phosphorus inflow, kg per year'); }
      });
      slider.querySelectorAll('input').forEach(function (t) {
        if (!t.getAttribute('aria-label')) { t.setAttribute('aria-label', 'Phosphorus inflow, kg per year'); }
      });
    }
    Object.keys(FILES).forEach(function (id) {
      document.querySelectorAll('#' + id + ' input[type="file"]').forEach(function (t) {
        if (!t.getAttribute('aria-label')) { t.setAttribute('aria-label', FILES[id]); }
      });
    });
  }
  function label(container) {
    set(container, 'role', 'tablist');
    set(container, 'aria-label', 'Views');
    var tabs = container.querySelectorAll(':scope > .tab');
    tabs.forEach(function (tab, i) {
      var selected = tab.classList.contains('tab--selected');
      set(tab, 'role', 'tab');
      set(tab, 'aria-selected', selected ? 'true' : 'false');
      set(tab, 'tabindex', selected ? '0' : '-1');
      if (!tab.dataset.keys) {
        tab.dataset.keys = '1';
        tab.addEventListener('keydown', function (e) {
          var all = container.querySelectorAll(':scope > .tab');
          var k = Array.prototype.indexOf.call(all, tab);
          if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); tab.click(); }
          else if (e.key === 'ArrowRight' || e.key === 'ArrowLeft') {
            e.preventDefault();
            var next = all[(k + (e.key === 'ArrowRight' ? 1 : all.length - 1)) % all.length];
            next.click(); next.focus();
          }
        });
      }
    });
  }
  function scan() { document.querySelectorAll('.view-tabs').forEach(label); names(); }
  new MutationObserver(scan).observe(document.documentElement, {
    subtree: true, childList: true, attributes: true, attributeFilter: ['class', 'role', 'aria-selected'],
  });
  document.addEventListener('DOMContentLoaded', scan);
})();
