"""The page's own CSS and the few scripts that run in the browser (keys, readout, copy link).

Only what must run client-side lives here: the keyboard listener, the cursor readout
(fed per strip by an air/vacuum table computed in Python) and the copy-link button.
"""

from __future__ import annotations

from atlas.physics.constants import C_KMS
from atlas.presentation import PALETTE

INK = PALETTE["ink"]
RULE = PALETTE["rule"]

CSS = f"""
:host {{ --striae-ink: {INK}; }}
.striae-card table {{ border-collapse: collapse; font-size: 12.5px; width: 100%; }}
.striae-card td {{ padding: 2px 4px; border-bottom: 1px solid {RULE}; vertical-align: top; }}
.striae-card td:first-child {{ color: #5a6275; white-space: nowrap; }}
.striae-card .na {{ color: #9a9fab; font-style: italic; }}
.striae-swatch {{ display:inline-block; width: 44px; height: 18px; border-radius: 3px;
  border: 1px solid #00000033; vertical-align: middle; }}
"""

READOUT_JS = """
const x = cb_obj.x;
if (x == null || !isFinite(x)) { return; }
const m = meta.data;
const sc = m.scale[0];
const lam = x * sc;
function interp(xs, ys, v) {
  const n = xs.length;
  if (n == 0) { return NaN; }
  if (n == 1) { return ys[0] + (v - xs[0]); }
  let lo = 0, hi = n - 1;
  if (v <= xs[0]) { hi = 1; } else if (v >= xs[n - 1]) { lo = n - 2; } else {
    while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (xs[mid] <= v) { lo = mid; } else { hi = mid; } }
  }
  const t = (v - xs[lo]) / (xs[hi] - xs[lo]);
  return ys[lo] + t * (ys[hi] - ys[lo]);
}
const vac = interp(conv.data.d, conv.data.vac, lam);
const air = interp(conv.data.d, conv.data.air, lam);
const xs = src.data.x, ys = src.data.y;
let f = '';
if (xs.length > 0) {
  let lo = 0, hi = xs.length - 1;
  while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (xs[mid] <= x) { lo = mid; } else { hi = mid; } }
  const i = Math.abs(xs[lo] - x) <= Math.abs(xs[hi] - x) ? lo : hi;
  const y = ys[i];
  f = isFinite(y) ? ' · flux ' + (Math.abs(y) < 1e4 ? y.toFixed(3) : y.toExponential(3)) : ' · flux masked';
}
let v = '';
if (m.ref_A[0] > 0) {
  const r = lam / m.ref_A[0];
  const kms = C_KMS * (r * r - 1) / (r * r + 1);
  v = ' · v ' + (kms >= 0 ? '+' : '') + kms.toFixed(2) + ' km/s from ' + m.ref_name[0];
}
const u = sc == 1 ? 'Å' : 'nm', d = sc == 1 ? 3 : 4;
out.text = '<b>' + m.frame[0] + ' frame</b> · λ ' + (air / sc).toFixed(d) + ' ' + u + ' air · ' +
  (vac / sc).toFixed(d) + ' ' + u + ' vacuum' + v + f;
""".replace("C_KMS", repr(C_KMS))

KEYS_JS = """
if (window.__striae_keys) { window.removeEventListener('keydown', window.__striae_keys); }
const actions = {ArrowDown: 'strip+', ArrowRight: 'strip+', ArrowUp: 'strip-', ArrowLeft: 'strip-',
                 PageDown: 'page+', PageUp: 'page-', Home: 'first', End: 'last',
                 f: 'feature+', F: 'feature-'};
window.__striae_keys = (e) => {
  const t = e.composedPath ? e.composedPath()[0] : e.target;
  if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT' || t.isContentEditable)) { return; }
  if (e.altKey || e.ctrlKey || e.metaKey) { return; }
  const a = actions[e.key];
  if (!a) { return; }
  e.preventDefault();
  bridge.tags = [a, Date.now()];
};
window.addEventListener('keydown', window.__striae_keys);
// Back and Forward: send the address the browser went to; the server restores that view
if (window.__striae_pop) { window.removeEventListener('popstate', window.__striae_pop); }
window.__striae_pop = () => { bridge.tags = ['url', window.location.search.slice(0, 4000), Date.now()]; };
window.addEventListener('popstate', window.__striae_pop);
// The view then writes its address again: the same address replaces the history entry
// instead of adding one (which would drop every entry after it, so Forward would not work)
if (!history.__striae_same_url) {
  const push = history.pushState.bind(history);
  history.pushState = function (data, title, url) {
    if (url != null && new URL(url, window.location.href).href === window.location.href) {
      return history.replaceState(data, title, url);
    }
    return push(data, title, url);
  };
  history.__striae_same_url = true;
}
"""


COPY_JS = """
const url = window.location.href;
field.value = url;
field.visible = true;
function find(root) {
  for (const e of root.querySelectorAll('*')) {
    if (e.tagName === 'INPUT' && e.placeholder === 'link to this view') { return e; }
    if (e.shadowRoot) { const f = find(e.shadowRoot); if (f) { return f; } }
  }
  return null;
}
function pick() {
  const el = find(document);
  if (!el) { return false; }
  el.value = url; el.focus(); el.select();
  try { return document.execCommand('copy'); } catch (err) { return false; }
}
if (navigator.clipboard && window.isSecureContext) {
  navigator.clipboard.writeText(url).catch(() => setTimeout(pick, 80));
} else {
  // plain http: no clipboard API; show the link selected so Ctrl+C copies it
  setTimeout(pick, 80);
}
"""
