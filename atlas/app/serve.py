"""The server: one Panel app at ``/`` that reads the atlas and keeps the view in the URL.

Each browser session gets its own :class:`~atlas.app.state.ViewState` and
:class:`~atlas.app.viewer.Viewer`; nothing a session relies on is kept per process
(the atlas data caches in :mod:`atlas.app.data` are only caches), so several processes
(``--procs``) can serve the same folder.
"""

from __future__ import annotations

import html
import logging
from urllib.parse import urlencode

import panel as pn
from bokeh.models import CustomJS
from panel.io.resources import LOCAL_DIST

from atlas.app.data import open_view_atlas
from atlas.app.scripts import KEYS_JS
from atlas.app.state import URL_PARAMS, ViewState, parse_search, to_query
from atlas.app.viewer import Viewer

_log = logging.getLogger("striae.serve")

TITLE = "Striae atlas"


def local_stylesheets(doc) -> None:
    """Point Panel's stylesheets at this server, never at a CDN.

    Panel takes the stylesheet base from the document's template variables, which are
    set when the process renders the page.  With ``--procs`` > 1 the session's websocket
    may reach another process, which then builds the document without them and Panel
    falls back to its CDN.  Setting the local base first keeps every request on the
    machine serving the atlas.
    """
    if doc is None or doc.session_context is None:
        return
    doc._template_variables.setdefault("dist_url", LOCAL_DIST)


def session_location(doc):
    """The session's ``pn.state.location``, also for addresses Panel cannot split.

    Panel splits the request address at ``?`` and fails on a second ``?`` inside the
    query (a hostile or mistyped link); such a link gets a location built here with
    the whole query, which our own parser then checks like any other.
    """
    if doc is None:
        return None
    try:
        return pn.state.location
    except ValueError:
        from panel.io.location import Location
        from panel.util import edit_readonly

        req = doc.session_context.request if doc.session_context is not None else None
        uri = str(getattr(req, "uri", "") or "")
        path, _, rest = uri.partition("?")
        search, _, _frag = rest.partition("#")
        loc = Location()
        with edit_readonly(loc):
            loc.param.update(pathname=path or "/", search=f"?{search}" if search else "")
        pn.state._locations[doc] = loc
        return loc


def create_session(atlas_path, query: str | None = None, keep: dict | None = None):
    """Build one session's view.  ``query`` (``?a=b&...``) defaults to the browser's URL;
    ``keep``, when given, receives the session's ``viewer`` (for tests and benchmarks)."""
    data = open_view_atlas(atlas_path)
    local_stylesheets(pn.state.curdoc)
    loc = session_location(pn.state.curdoc)
    if query is None:
        query = loc.search if loc is not None and loc.search else ""
    state = ViewState(name="view")
    values, notices = parse_search(query, data.strips_of())
    state.param.update(**values)
    if not data.star_ids:
        return pn.pane.Alert("This atlas holds no stars yet.", alert_type="warning")
    viewer = _viewer_avoiding_damage(data, state, notices)
    if keep is not None:
        keep["viewer"] = viewer
    if loc is not None and pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
        # Mirror the state to the URL.  Values arriving through the sync are checked again
        # by the viewer's watcher with the same rules as above.
        loc.sync(state, list(URL_PARAMS), on_error=viewer.on_url_error)
        viewer.location = loc  # for Back/Forward (Viewer.restore_address)
        pn.state.curdoc.js_on_event("document_ready", CustomJS(args={"bridge": viewer.bridge}, code=KEYS_JS))

        def canonical():  # once loaded, show the validated values in the address bar
            canon = "?" + urlencode(to_query(state))
            if canon != loc.search:
                loc.search = canon

        pn.state.onload(canonical)
    if pn.state.curdoc is not None:
        pn.state.curdoc.title = f"{TITLE}: {state.star}"
    return viewer.layout


def _viewer_avoiding_damage(data, state, notices):
    """The session's Viewer; a star whose store is damaged is named in a notice and the
    session opens on the next readable star instead."""
    from atlas.store import DamagedStar

    tried = []
    while True:
        try:
            return Viewer(data, state, notices + [d.message for d in tried])
        except DamagedStar as exc:
            tried.append(exc)
            left = [s for s in data.star_ids if s not in {d.star_id for d in tried}]
            if not left:
                raise
            state.param.update(star=left[0], page=1, lo=None, hi=None, compare="")


def safe_session(atlas_path):
    """:func:`create_session`, but a failure shows a short notice in the browser; the
    traceback goes to the server's log only (never paths or code to a visitor)."""
    from atlas.store import DamagedStar

    try:
        return create_session(atlas_path)
    except DamagedStar as exc:
        _log.warning("session: %s (%s)", exc.message, exc.detail)
        return pn.pane.Alert(html.escape(exc.message), alert_type="danger")
    except Exception:
        _log.exception("session could not be made")
        return pn.pane.Alert("This view could not be made; the server's log says why.",
                             alert_type="danger")


def serve(atlas_path, port: int = 5006, address: str = "127.0.0.1", procs: int = 1,
          show: bool = False):
    """Serve the atlas until interrupted (blocks)."""
    open_view_atlas(atlas_path)  # fail early, with a one-line error, on a bad atlas
    if procs > 1:
        _stop_workers_with_parent()
    pn.extension(notifications=False)
    origins = [f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"]
    pn.serve(
        {"/": lambda: safe_session(atlas_path)},
        port=port, address=address, num_procs=procs, show=show, title=TITLE,
        websocket_origin=origins, start=True, print_url=False,
    )


def _stop_workers_with_parent() -> None:
    """On SIGTERM, stop the forked server processes too, then exit.

    The handler is inherited by the forked workers (where it finds no children
    and just exits), so a ``kill PARENT`` leaves no worker serving the port.
    """
    import signal
    import sys

    import psutil

    def _stop(signum, frame):
        for child in psutil.Process().children(recursive=True):
            try:
                child.terminate()
            except psutil.Error:
                pass
        sys.exit(0)

    signal.signal(signal.SIGTERM, _stop)
