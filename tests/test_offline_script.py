"""The bundled chart script is made once, kept on disk and read back unchanged."""

from __future__ import annotations

import pytest
import vl_convert
from altair.utils._importers import vl_version_for_vl_convert

from rankfold.widgets import offline_script


@pytest.fixture
def cache(tmp_path, monkeypatch):
    monkeypatch.setenv(offline_script.CACHE_VARIABLE, str(tmp_path))
    return tmp_path


def test_script_is_what_vl_convert_bundles_and_is_kept(cache, monkeypatch):
    made = offline_script.chart_script()
    # Reference: vl-convert's own bundling of Altair's front-end source, which is what
    # altair.JupyterChart.enable_offline() runs (Altair 6 source, read for this check).
    expected = vl_convert.javascript_bundle(offline_script._front_end_source(),
                                            vl_version=vl_version_for_vl_convert())
    assert made == expected
    files = list(cache.glob("chart-script-*.js"))
    assert len(files) == 1 and files[0].read_text(encoding="utf-8") == made
    assert not list(cache.glob("*.part"))

    def no_bundling(*args, **kwargs):
        raise AssertionError("bundled again although the script is on disk")

    monkeypatch.setattr(vl_convert, "javascript_bundle", no_bundling)
    assert offline_script.chart_script() == made


def test_file_name_follows_the_versions(cache, monkeypatch):
    offline_script.chart_script()
    monkeypatch.setattr(vl_convert, "__version__", "0.0.0-test")
    offline_script.chart_script()
    names = sorted(path.name for path in cache.glob("chart-script-*.js"))
    assert len(names) == 2 and any("0.0.0-test" in name for name in names)


def test_unwritable_folder_still_gives_the_script(tmp_path, monkeypatch):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    monkeypatch.setenv(offline_script.CACHE_VARIABLE, str(blocker / "below"))
    script = offline_script.chart_script()
    assert "vega" in script.lower() and len(script) > 100_000


def test_default_folder_is_the_user_cache(monkeypatch, tmp_path):
    monkeypatch.delenv(offline_script.CACHE_VARIABLE, raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    assert offline_script.cache_folder() == tmp_path / "rankfold"
