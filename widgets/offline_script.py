"""The chart script the page runs, made once per version and kept on disk.

Charts render with no network: :class:`altair.JupyterChart` in offline mode runs its front-end
code bundled with Vega by vl-convert. Bundling takes seconds, so the bundle is written to a
cache folder, named by the versions and source it was made from, and later processes read it.
"""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

import altair as alt

__all__ = ["cache_folder", "chart_script", "offline_chart_class"]

#: Environment variable naming the folder for the cached script (default: the user cache).
CACHE_VARIABLE = "RANKFOLD_CACHE_DIR"


def cache_folder() -> Path:
    """Folder that keeps the bundled chart script.

    ``$RANKFOLD_CACHE_DIR`` if set, else ``$XDG_CACHE_HOME/rankfold``, else
    ``~/.cache/rankfold`` (the freedesktop.org base-directory convention, common practice on
    every platform Jupyter runs on).

    Returns
    -------
    pathlib.Path
    """
    if os.environ.get(CACHE_VARIABLE):
        return Path(os.environ[CACHE_VARIABLE])
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base) / "rankfold"


def _front_end_source() -> str:
    """The chart widget's own front-end code, without its import lines (bundled instead)."""
    from altair.jupyter.jupyter_chart import load_js_src

    lines = load_js_src().split("\n")
    while lines and (not lines[0].strip() or lines[0].startswith(("import", "//"))):
        lines.pop(0)
    return "\n".join(lines)


def chart_script() -> str:
    """The chart widget's front-end code bundled with Vega, from the cache when possible.

    The file name holds the Altair and vl-convert versions, the Vega-Lite version and a hash
    of the source, so an upgrade of any of them makes a new bundle. A folder that cannot be
    written only costs the bundling time again in the next process.

    Returns
    -------
    str
        JavaScript module text, the same that ``altair.JupyterChart.enable_offline`` builds.
    """
    import vl_convert
    from altair.utils._importers import vl_version_for_vl_convert

    source = _front_end_source()
    vl_version = vl_version_for_vl_convert()
    digest = hashlib.sha256(source.encode()).hexdigest()[:16]
    name = f"chart-script-{alt.__version__}-{vl_convert.__version__}-{vl_version}-{digest}.js"
    path = cache_folder() / name
    try:
        return path.read_text(encoding="utf-8")
    except OSError:
        pass
    script = vl_convert.javascript_bundle(source, vl_version=vl_version)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        # Written beside its final name, then renamed: a reader never sees half a file.
        with tempfile.NamedTemporaryFile("w", encoding="utf-8", dir=path.parent,
                                         suffix=".part", delete=False) as part:
            part.write(script)
        os.replace(part.name, path)
    except OSError:
        pass
    return script


def offline_chart_class() -> type[alt.JupyterChart]:
    """:class:`altair.JupyterChart` switched to offline mode with the cached script.

    Returns
    -------
    type
        The class, ready to make chart widgets that need no network.
    """
    chart_class = alt.JupyterChart
    if not getattr(chart_class, "_is_offline", False):
        if hasattr(chart_class, "_is_offline"):
            # What enable_offline() sets, with the bundle read from the cache.
            chart_class._esm = chart_script()
            chart_class._is_offline = True
        else:  # an Altair that keeps its mode elsewhere: let it bundle
            chart_class.enable_offline()
    return chart_class
