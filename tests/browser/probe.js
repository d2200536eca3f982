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
  // The plots: each an inline <svg> of its own figure, drawn with a size.
  var plots = document.querySelectorAll('figure svg').length;
  // Ids unique across the whole document, so no plot's references land in another plot.
  var seen = {}, dups = 0;
  document.querySelectorAll('[id]').forEach(function (el) {
    if (seen[el.id]) dups++;
    seen[el.id] = true;
  });
  if (dups) problems.push(dups + ' duplicate ids');
  // No script element (in any namespace) and no event handler attribute inside any SVG.
  var svgScripts = 0;
  svgs.forEach(function (s) {
    s.querySelectorAll('*').forEach(function (el) {
      if (el.localName.toLowerCase() === 'script' || el.localName === 'foreignObject') svgScripts++;
      for (var a = 0; a < el.attributes.length; a++)
        if (/^on/i.test(el.attributes[a].name)) svgScripts++;
    });
  });
  if (svgScripts) problems.push(svgScripts + ' scripts or handlers inside svg');
  var scripts = document.getElementsByTagName('script').length;
  // What a reader sees (innerText leaves out script source): the odd names as plain text.
  var seenText = document.body.innerText;
  var odd = seenText.indexOf('<script>') >= 0 && seenText.indexOf('it\'s; "odd"') >= 0;
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
      ' images=' + imgs.length + ' svgs=' + svgs.length + ' plots=' + plots + ' scripts=' +
      scripts + ' odd=' + (odd ? 'yes' : 'no') + ' rows=' + rows + ' sorted=' + sorted;
  document.body.appendChild(marker);
});
