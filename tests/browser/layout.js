// Injected by tests/cli_browser.sh into a copy of a report opened at a given window width: checks
// that the page does not scroll sideways, that the claims table keeps every column on screen, that
// plot text is drawn at a readable size and that the graph is drawn; writes the result into the
// DOM for --dump-dom. See LICENSE.
window.addEventListener('load', function () {
  var problems = [];
  var W = window.innerWidth;
  var doc = document.documentElement;
  // No sideways scroll of the page itself (a frame that scrolls inside is fine).
  if (doc.scrollWidth > W + 1) problems.push('page scrolls sideways: ' + doc.scrollWidth + ' > ' + W);
  var off = 0;
  document.querySelectorAll('body *').forEach(function (el) {
    var r = el.getBoundingClientRect();
    if (r.width === 0) return;
    // Inside a frame that scrolls on its own, an element may lie beyond the window.
    for (var p = el.parentElement; p && p !== document.body; p = p.parentElement) {
      var ox = getComputedStyle(p).overflowX;
      if (ox === 'auto' || ox === 'scroll' || ox === 'hidden') return;
    }
    if (r.right > W + 1 || r.left < -1) off++;
  });
  if (off) problems.push(off + ' elements beyond the window');
  // The claims table: every column on screen, nothing hidden in a sideways scroll.
  var table = document.getElementById('claims-table');
  if (!table) problems.push('no claims table');
  else {
    var frame = table.parentElement, tr = table.getBoundingClientRect();
    if (tr.right > W + 1) problems.push('claims table ends at ' + Math.round(tr.right) + ' > ' + W);
    if (frame.scrollWidth > frame.clientWidth + 1)
      problems.push('claims table scrolls sideways inside its frame (' + frame.scrollWidth + ' > ' +
                    frame.clientWidth + ')');
    var cells = 0, hidden = 0;
    table.querySelectorAll('tbody td').forEach(function (td) {
      cells++;
      var r = td.getBoundingClientRect();
      if (r.right > W + 1 || r.width === 0) hidden++;
    });
    if (hidden) problems.push(hidden + ' of ' + cells + ' claim cells off screen or collapsed');
  }
  // Plot text: font size times the scale at which the SVG is drawn, in CSS pixels.
  var smallest = Infinity, plots = 0;
  document.querySelectorAll('figure svg').forEach(function (svg) {
    plots++;
    var vb = svg.viewBox && svg.viewBox.baseVal, box = svg.getBoundingClientRect();
    if (!vb || !vb.width || !box.width) return;
    var scale = box.width / vb.width;
    svg.querySelectorAll('text').forEach(function (t) {
      if (!t.textContent.trim()) return;
      var px = parseFloat(getComputedStyle(t).fontSize) * scale;
      if (px < smallest) smallest = px;
    });
  });
  if (!(smallest >= 8.5)) problems.push('plot text drawn at ' + smallest.toFixed(1) + ' px (< 8.5)');
  // The graph drawing: an inline SVG naming the graph's variables, and its listing in words.
  var graph = document.querySelector('#fig-graph svg');
  var names = graph ? graph.textContent : '';
  var drawn = graph && names.indexOf(window.SHOAL_EXPECT_NODE || 'arrivals') >= 0;
  if (!drawn) problems.push('no graph drawing naming ' + (window.SHOAL_EXPECT_NODE || 'arrivals'));
  var listed = document.querySelectorAll('#graph ul.graph-list li').length;
  if (!listed) problems.push('no graph listing');
  var marker = document.createElement('pre');
  marker.id = 'layout-check';
  marker.textContent = (problems.length ? 'LAYOUT-FAIL ' + problems.join('; ') : 'LAYOUT-OK') +
      ' width=' + W + ' page=' + doc.scrollWidth + ' plots=' + plots + ' text_px=' +
      smallest.toFixed(1) + ' graph=' + (drawn ? 'yes' : 'no') + ' listed=' + listed +
      ' rows=' + (table ? table.tBodies[0].rows.length : 0);
  document.body.appendChild(marker);
  // In a frame (the 390-px case: a headless window is never narrower than 500 px), the frame's
  // page hands its verdict to the page around it.
  if (window.parent !== window) window.parent.postMessage(marker.textContent, '*');
});
