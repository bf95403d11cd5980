"""Hostile and random links: the server answers every one (no 5xx, no traceback in its
log), and a few opened in the browser show a notice, draw the view and run nothing."""

from __future__ import annotations

import json
import random
import string
from concurrent.futures import ThreadPoolExecutor
from urllib.parse import quote, urlencode

import pytest
import requests

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(300)]

KEYS = ["star", "compare", "lo", "hi", "frame", "medium", "unit", "flux", "page", "per_page",
        "lines", "strength", "ref", "marks"]

HOSTILE = [
    "../../etc/passwd", "..%2F..%2Fatlas.json", "/etc/passwd", "stars/../../x", "C:\\Windows",
    "test-star-a/../test-star-b", "TEST-STAR-A", "\x00", "%00", "nan", "NaN", "inf", "-inf",
    "1e309", "-1e309", "9" * 400, "-0", "1e-320", "[]", "{}", "[[", '{"a":', "null", "true",
    "[1,2,3]", '[["x","y","z"]]', "[[6000,5000,\"back\"]]", "[[1e309,2,\"\"]]",
    json.dumps([[5000 + i, 5001 + i, "n"] for i in range(400)]),
    json.dumps([[5005, 5010, "<script>alert(1)</script>"]]),
    json.dumps([[5005, 5010, "<img src=x onerror=alert(1)>"]]),
    json.dumps([[5005, 5010, "\u202e\u0000\u200b日本語 ✓ 🌟" * 20]]),
    ",".join(["Fe I"] * 300), "<svg onload=alert(1)>", "javascript:alert(1)", "'; DROP TABLE x; --",
    "日本語", "🌟" * 100, "a" * 5000, " ", "", "%", "%%", "&", "=", "#",
]


def _random_value(rng: random.Random) -> str:
    kind = rng.randrange(6)
    if kind == 0:
        return rng.choice(HOSTILE)
    if kind == 1:
        return repr(rng.uniform(-1e12, 1e12))
    if kind == 2:
        return str(rng.randint(-10**15, 10**15))
    if kind == 3:
        return "".join(rng.choice(string.printable) for _ in range(rng.randrange(0, 60)))
    if kind == 4:
        return json.dumps([[rng.uniform(0, 1e6), rng.uniform(0, 1e6), rng.choice(HOSTILE)]
                           for _ in range(rng.randrange(0, 80))])
    return rng.choice(["test-star-a", "test-star-b", "rest", "air", "nm", "raw", "3", "12", "0"])


#: Longest query sent: the server (tornado) closes connections whose request line is
#: longer than its 64 KiB header limit before the app sees them.
MAX_QUERY = 30_000


def hostile_queries(n: int, seed: int = 20261201) -> list[str]:
    """Seeded query strings: hostile values, random values, repeated keys, unknown keys."""
    rng = random.Random(seed)
    out = [urlencode({k: v}) for k in KEYS for v in HOSTILE[:6]]  # every key sees path-like ids
    out.append("star=test-star-a&medium=ktE?$r|up&ref=x?y?z")  # a second '?' in the address
    while len(out) < n:
        pairs = [(rng.choice(KEYS + ["x", "__proto__", "constructor"]), _random_value(rng))
                 for _ in range(rng.randrange(1, 9))]
        if rng.random() < 0.3:  # repeated keys
            pairs += [(pairs[0][0], _random_value(rng))]
        if rng.random() < 0.15:  # raw, not URL-encoded
            q = "&".join(f"{k}={v}" for k, v in pairs)
        else:
            q = "&".join(f"{quote(k)}={quote(v, safe='')}" for k, v in pairs)
        if len(q) <= MAX_QUERY:
            out.append(q)
    return out


def test_hostile_links_never_break_the_server(server_procs2):
    """Plain GETs (each makes a whole session) to ``striae serve --procs 2``, two at a time."""
    server = server_procs2
    queries = hostile_queries(210)
    assert len(queries) >= 200

    def get(q):
        with requests.get(server["url"] + "?" + q, timeout=60) as r:
            return r.status_code, q

    with ThreadPoolExecutor(2) as pool:
        results = list(pool.map(get, queries))
    bad = [(code, q[:120]) for code, q in results if code >= 500]
    log = server["log"].read_text(errors="replace")
    assert bad == [], bad[:5]
    assert "Traceback" not in log, log[-3000:]
    assert "ERROR" not in log, log[-3000:]


@pytest.mark.parametrize("q", [
    "star=..%2F..%2Fetc%2Fpasswd&lo=nan&hi=inf",
    "star=test-star-a&marks=" + quote(json.dumps([[5005, 5010, "<img src=x onerror=alert(1)>"]])),
    "star=test-star-a&compare=..%2Ftest-star-b&per_page=1e309&page=-5",
    "star=test-star-a&lines=" + quote(",".join(["Fe I"] * 300)) + "&ref=%3Cscript%3E",
    "star=test-star-a&star=test-star-b&frame=sideways&marks=%5B%5B",
])
def test_hostile_links_in_the_browser_show_the_view_and_run_nothing(server, viewer_page, view_tools, q):
    page = viewer_page
    dialogs = []
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    view_tools.open_view(page, server["url"], "?" + q)
    page.wait_for_timeout(300)
    assert dialogs == [] and page.errors == []
    assert page.evaluate("() => document.querySelectorAll('img[src=\"x\"]').length") == 0
    assert "Traceback" not in server["log"].read_text(errors="replace")
