"""``reportgen serve SRC``: build, serve on 127.0.0.1, rebuild on change, reload the page.

The server listens on the loopback address only. Pages are served from the
output folder as built; the small reload script is added to HTML responses
on the way out and never written to disk, so served files and built files
stay byte-identical.
"""

from __future__ import annotations

import functools
import http.server
import threading
from pathlib import Path

from .build import Options, build

RELOAD_PATH = "/__reportgen/generation"
SCRIPT = (
    "<script>(function(){var g=null;function poll(){fetch('" + RELOAD_PATH + "',{cache:'no-store'})"
    ".then(function(r){return r.text()}).then(function(t){if(g!==null&&t!==g){location.reload()}g=t})"
    ".catch(function(){});}setInterval(poll,1000);poll();})();</script>"
)


class _State:
    generation = 0


def _handler(out: Path, state: _State):
    class Handler(http.server.SimpleHTTPRequestHandler):
        def log_message(self, fmt, *args):  # keep the terminal for build output
            pass

        def do_GET(self):
            if self.path == RELOAD_PATH:
                body = str(state.generation).encode()
                self.send_response(200)
                self.send_header("Content-Type", "text/plain")
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)
                return
            path = self.translate_path(self.path)
            if Path(path).is_dir():
                path = str(Path(path) / "index.html")
            if path.endswith(".html") and Path(path).is_file():
                data = Path(path).read_bytes().replace(b"</body>", SCRIPT.encode() + b"</body>", 1)
                self.send_response(200)
                self.send_header("Content-Type", "text/html; charset=utf-8")
                self.send_header("Content-Length", str(len(data)))
                self.end_headers()
                self.wfile.write(data)
                return
            super().do_GET()

    return functools.partial(Handler, directory=str(out))


def serve(src: Path, out: Path, options: Options, port: int = 8000, log=print, stop: threading.Event | None = None):
    """Serve until interrupted (or until ``stop`` is set, for tests)."""
    state = _State()
    build(src, out, options, log=log)
    server = http.server.ThreadingHTTPServer(("127.0.0.1", port), _handler(out, state))
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    log(f"serving {out} at http://127.0.0.1:{server.server_address[1]}/ (Ctrl-C to stop)")
    try:
        from watchfiles import watch

        for _changes in watch(src, stop_event=stop, debounce=300, yield_on_timeout=False):
            try:
                build(src, out, options, log=log)
            except Exception as exc:  # a failed rebuild must not stop the server
                log(f"rebuild failed: {exc}")
            state.generation += 1
    except KeyboardInterrupt:
        pass
    finally:
        server.shutdown()
        server.server_close()
    return server
