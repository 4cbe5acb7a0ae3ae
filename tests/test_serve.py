"""`reportgen serve`: loopback only, pages as built plus a reload script, rebuild on change."""

import shutil
import threading
import time
import urllib.request
from pathlib import Path

from reportgen.build import Options
from reportgen.serve import RELOAD_PATH, serve

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"


def test_serve_builds_serves_and_rebuilds(tmp_path):
    src = tmp_path / "src"
    shutil.copytree(DEMO / "joinery-workshop-230v", src / "joinery-workshop-230v")
    out = tmp_path / "site"
    stop = threading.Event()
    lines: list[str] = []
    t = threading.Thread(target=serve, args=(src, out, Options(pdf=False, jobs=1)),
                         kwargs=dict(port=0, log=lines.append, stop=stop), daemon=True)
    t.start()
    try:
        deadline = time.time() + 60
        while not any("serving" in x for x in lines) and time.time() < deadline:
            time.sleep(0.1)
        url = next(x for x in lines if "serving" in x).split(" at ")[1].split()[0]
        assert url.startswith("http://127.0.0.1:")
        page = urllib.request.urlopen(url + "joinery-workshop-230v/index.html", timeout=10).read().decode()
        assert RELOAD_PATH in page  # the reload script is added on the way out...
        assert RELOAD_PATH not in (out / "joinery-workshop-230v" / "index.html").read_text()  # ...not on disk
        gen0 = urllib.request.urlopen(url + RELOAD_PATH.lstrip("/"), timeout=10).read()
        y = src / "joinery-workshop-230v" / "project.yaml"
        y.write_text(y.read_text().replace("revision: A", "revision: Z"))
        deadline = time.time() + 60
        while time.time() < deadline:
            if urllib.request.urlopen(url + RELOAD_PATH.lstrip("/"), timeout=10).read() != gen0:
                break
            time.sleep(0.2)
        else:
            raise AssertionError("no rebuild after a change")
        assert '"revision": "Z"' in (out / "joinery-workshop-230v" / "results.json").read_text()
    finally:
        stop.set()
        t.join(timeout=30)
