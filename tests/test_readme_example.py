"""The README's code example runs as printed (so readers can trust it)."""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

README = Path(__file__).resolve().parents[1] / "README.md"


def test_readme_python_example_runs() -> None:
    blocks = re.findall(r"```python\n(.*?)```", README.read_text(encoding="utf-8"), re.S)
    assert blocks, "the README has no python example"
    namespace: dict = {}
    exec(blocks[0], namespace)  # noqa: S102 - our own README
    rebuilt: dict = {"df": namespace["df"]}
    exec(namespace["merged"].to_code(), rebuilt)  # the printed code rebuilds the same table
    pd.testing.assert_frame_equal(rebuilt["measures"], namespace["merged"].measures())
    assert isinstance(namespace["df2"]["service_rating"].dtype, pd.CategoricalDtype)


def test_every_later_readme_example_runs_after_the_first() -> None:
    blocks = re.findall(r"```python\n(.*?)```", README.read_text(encoding="utf-8"), re.S)
    namespace: dict = {}
    for block in blocks:  # in reading order, as a reader would run them
        exec(block, namespace)  # noqa: S102 - our own README
