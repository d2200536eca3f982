// Injected by tests/cli_browser.sh into a copy of the demo report: after the page has loaded, it
// checks what a reader would see and writes the result into the DOM for --dump-dom. See LICENSE.
window.addEventListener('load', function () {
  var problems = [];
  var imgs = document.querySelectorAll('img');
  imgs.forEach(function (img, i) {
    if (!img.complete || img.naturalWidth === 0 || img.naturalHeight === 0)
      problems.push('image ' + (i + 1) + ' did not load');
  });
  var svgs = document.querySelectorAll('svg');
  svgs.forEach(function (s, i) {
    var box = s.getBoundingClientRect();
    if (box.width === 0 || box.height === 0) problems.push('svg ' + (i + 1) + ' has no size');
  });
  var table = document.getElementById('claims-table');
  var rows = table ? table.tBodies[0].rows.length : 0;
  if (rows === 0) problems.push('no claims table');
  // Click the "power" heading: the rows must come out in rising power (unknowns last).
  var sorted = 'no';
  if (table) {
    var heads = table.tHead.rows[0].cells, col = -1;
    for (var k = 0; k < heads.length; k++) if (heads[k].textContent === 'power') col = k;
    if (col >= 0) {
      heads[col].click();
      var last = -Infinity, okay = true;
      Array.prototype.forEach.call(table.tBodies[0].rows, function (r) {
        var v = parseFloat(r.cells[col].dataset.v);
        if (isNaN(v)) v = Infinity;
        if (v < last) okay = false;
        last = v;
      });
      sorted = okay ? 'yes' : 'no';
      if (!okay) problems.push('sorting by power failed');
    } else problems.push('no power column');
  }
  var marker = document.createElement('pre');
  marker.id = 'browser-check';
  marker.textContent = (problems.length ? 'BROWSER-CHECK-FAIL ' + problems.join('; ')
                                        : 'BROWSER-CHECK-OK') +
      ' images=' + imgs.length + ' svgs=' + svgs.length + ' rows=' + rows + ' sorted=' + sorted;
  document.body.appendChild(marker);
});
