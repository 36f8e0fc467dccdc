"""The README's design-of-experiments example runs: its code block, sent to the app in process.

The block (README, "A design of experiments in one request") builds a 10 x 10 x 10 grid of whole
compressors as one columns request and posts it with urllib; here urllib's ``urlopen`` hands the
request to the Flask test client instead of the network, and an answer other than 200 raises as
urllib would. The numbers are the README's invented machine, not check values.
"""

from __future__ import annotations

import contextlib
import io
import re
import urllib.error
import urllib.request
from pathlib import Path

import pytest

from service import create_app

README = Path(__file__).resolve().parents[2] / "README.md"
MARKER = "<!-- design-of-experiments example"


def readme_block() -> str:
    text = README.read_text(encoding="utf-8")
    after = text[text.index(MARKER):]
    return re.search(r"```python\n(.*?)```", after, re.DOTALL).group(1)


@pytest.fixture
def sent(monkeypatch):
    client = create_app({"LOG_LEVEL": "warning"}).test_client()
    requests = []

    @contextlib.contextmanager
    def urlopen(request, *args, **kwargs):
        path = request.full_url.split("8080", 1)[1]
        response = client.post(path, data=request.data, headers=dict(request.header_items()))
        requests.append((request.full_url, response.status_code))
        if response.status_code != 200:
            raise urllib.error.HTTPError(request.full_url, response.status_code, response.get_data(as_text=True),
                                         response.headers, None)
        yield io.BytesIO(response.get_data())

    monkeypatch.setattr(urllib.request, "urlopen", urlopen)
    return requests


def test_the_readme_grid_of_1000_machines_is_one_columns_request_answered_in_full(sent, capsys):
    namespace: dict = {}
    exec(compile(readme_block(), str(README), "exec"), namespace)  # noqa: S102 - the README's own example
    assert sent == [("http://127.0.0.1:8080/v1/machine-design", 200)]  # one request, no 4xx
    answer = namespace["answer"]
    stages = answer["columns"]["stage_count"]
    assert len(stages) == 1000 and len(namespace["grid"]) == 1000
    failed = {error["index"] for error in answer["errors"]}
    assert len(failed) < 1000
    assert all((stages[i] is None) == (i in failed) for i in range(1000))
    counts = {s for s in stages if s is not None}
    assert len(counts) > 1  # machines of different stage counts in one answer
    # Ragged lists: each machine's stations at its own count, 2n + 1.
    for i, n in enumerate(stages):
        if n is not None:
            assert len(answer["columns"]["station_total_pressure"][i]) == 2 * n + 1
            assert len(answer["columns"]["row_blade_count"][i]) == 2 * n
    assert "1000 machines in" in capsys.readouterr().out
