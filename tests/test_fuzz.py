"""Property-based fuzzing of project files (hypothesis).

Whatever the file holds, valid or broken: the exit code is 0 or 2; on 2 every
line is ``file:line:col: message``; there is no traceback; and a build writes
nothing outside its output folder.

CI runs a few hundred examples. The long run (documented in DEVELOPERS.md):
    REPORTGEN_FUZZ_EXAMPLES=10000 python -m pytest -q tests/test_fuzz.py
"""

import os
import re
import shutil
import tempfile
from pathlib import Path

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reportgen.cli import main

EXAMPLES = int(os.environ.get("REPORTGEN_FUZZ_EXAMPLES", "300"))
LOCATED = re.compile(r"^\S+:\d+:\d+: \S")

VALID = {
    "format": 1,
    "project": {"title": "Fuzz", "client": "C", "revision": "A", "date": "2026-01-02", "summary": "*x*"},
    "system": {"frequency": "60 Hz", "phases": 3, "voltage": "480 V"},
    "loads": [
        {"name": "M", "meter": {"current": "100 A", "power": "60 kW"}},
        {"name": "Mo", "count": 2, "motor": {"output": "10 hp", "efficiency": "90 %", "power_factor": 0.8}},
        {"name": "D", "demand": {"power": "20 kW", "power_factor": 0.85}},
        {"name": "S", "scope": {"voltage": "10 V", "shunt_voltage": "1 V", "shunt_resistance": "1 ohm",
                                "time_shift": "1 ms"}},
        {"name": "N", "network": {"series": [{"resistor": "5 ohm"}, {"inductor": "20 mH"}]}},
    ],
    "correction": {"target_power_factor": 0.95, "unit_sizes": ["5 kvar", "10 kvar"]},
}

scalars = st.one_of(
    st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=20),
    st.sampled_from(["480 V", "0 V", "-5 kW", "1e30 V", "nan V", "50 kvar", "10 kVA", "2 uF", "84 %", "150 %",
                     "abc", "1 furlong", "60 Hz", "0 ohm", "3", "lagging", "leading", "wye", "delta",
                     "../x.csv", "/etc/passwd", "<script>", "{{x}}"]),
)


def paths(data, prefix=()):
    yield prefix
    if isinstance(data, dict):
        for k, v in data.items():
            yield from paths(v, prefix + (k,))
    elif isinstance(data, list):
        for i, v in enumerate(data):
            yield from paths(v, prefix + (i,))


def mutate(data, path, action, value):
    import copy

    data = copy.deepcopy(data)
    if not path:
        return value if action == "replace" else data
    parent = data
    for p in path[:-1]:
        parent = parent[p]
    key = path[-1]
    if action == "replace":
        parent[key] = value
    elif action == "delete":
        del parent[key]
    elif action == "add" and isinstance(parent, dict):
        parent[f"x_{abs(hash(str(value))) % 97}"] = value
    return data


ALL_PATHS = list(paths(VALID))


@st.composite
def documents(draw):
    kind = draw(st.sampled_from(["mutate", "mutate", "mutate", "text"]))
    if kind == "text":
        return draw(st.one_of(st.text(max_size=300), st.binary(max_size=300).map(lambda b: b.decode("latin-1"))))
    data = VALID
    for _ in range(draw(st.integers(1, 4))):
        path = draw(st.sampled_from(ALL_PATHS))
        try:
            data = mutate(data, path, draw(st.sampled_from(["replace", "delete", "add"])),
                          draw(st.one_of(scalars, st.lists(scalars, max_size=3),
                                         st.dictionaries(st.text(max_size=8), scalars, max_size=3))))
        except (KeyError, IndexError, TypeError):
            pass
    return yaml.safe_dump(data, allow_unicode=True, sort_keys=False)


def check_run(argv):
    import contextlib
    import io

    err, out = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
        code = main(argv)
    text = err.getvalue()
    assert code in (0, 2), (code, text)
    assert "Traceback" not in text + out.getvalue()
    if code == 2:
        lines = [x for x in text.splitlines() if x]
        assert lines and all(LOCATED.match(x) for x in lines), lines
    return code


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(documents())
def test_calc_exit_codes_and_messages(doc):
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "p"
        folder.mkdir()
        (folder / "project.yaml").write_text(doc, encoding="utf-8", errors="surrogatepass")
        check_run(["calc", str(folder)])


@settings(max_examples=max(EXAMPLES // 30, 5), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(documents())
def test_build_writes_nothing_outside_its_output(doc):
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        src = tmp / "src" / "p"
        src.mkdir(parents=True)
        (src / "project.yaml").write_text(doc, encoding="utf-8", errors="surrogatepass")
        before = sorted(p.relative_to(tmp) for p in tmp.rglob("*"))
        code = main(["build", str(tmp / "src"), "--out", str(tmp / "out"), "--no-pdf", "--quiet", "--jobs", "1"])
        assert code in (0, 2)
        after = sorted(p.relative_to(tmp) for p in tmp.rglob("*"))
        new = [p for p in after if p not in before]
        assert all(p.parts[0] == "out" for p in new), new
