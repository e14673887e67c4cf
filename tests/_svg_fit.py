"""Measure, in a real browser, whether a chart's text fits: the JavaScript shared by browser tests.

``TEXT_OUTSIDE`` takes an ``<svg>`` element and returns every text element whose bounding box
(``getBoundingClientRect``, as drawn) reaches past the SVG's own box by more than half a pixel,
every pair of axis labels of one axis that overlap (ticks run together), and every pair of text
marks of one layer that overlap (names printed over each other, e.g. on the term map). An empty
list means every title, subtitle, label, tick and name is inside its chart and readable.
"""

TEXT_OUTSIDE = """
svg => {
  const box = svg.getBoundingClientRect();
  const out = [];
  const texts = Array.from(svg.querySelectorAll('text')).filter(t => t.textContent.trim());
  for (const t of texts) {
    const r = t.getBoundingClientRect();
    if (r.width === 0) continue;
    if (r.left < box.left - 0.5 || r.right > box.right + 0.5 ||
        r.top < box.top - 0.5 || r.bottom > box.bottom + 0.5) {
      out.push(`outside: "${t.textContent}" [${Math.round(r.left - box.left)}, ` +
               `${Math.round(r.right - box.left)}] of width ${Math.round(box.width)}`);
    }
  }
  for (const axis of svg.querySelectorAll('.role-axis-label, .mark-text.role-mark')) {
    const rects = Array.from(axis.querySelectorAll('text'))
      .filter(t => t.textContent.trim() && t.getAttribute('opacity') !== '0')
      .map(t => [t.textContent, t.getBoundingClientRect()]);
    for (let i = 0; i < rects.length; i++) {
      for (let j = i + 1; j < rects.length; j++) {
        const [a, ra] = rects[i], [b, rb] = rects[j];
        if (ra.left < rb.right - 0.5 && rb.left < ra.right - 0.5 &&
            ra.top < rb.bottom - 0.5 && rb.top < ra.bottom - 0.5) {
          out.push(`overlap: "${a}" and "${b}"`);
        }
      }
    }
  }
  return out;
}
"""
