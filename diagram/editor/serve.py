"""Run the editor for one study on a local address until Ctrl-C."""

from __future__ import annotations

import secrets
import socket
from collections.abc import Callable
from dataclasses import dataclass

from diagram.editor.study_edit import EditedStudy

LOOPBACK = "127.0.0.1"


@dataclass(frozen=True)
class Address:
    """Where the editor listens, and the address (with its token) a browser opens."""

    host: str
    port: int
    token: str

    @property
    def url(self) -> str:
        shown = f"[{self.host}]" if ":" in self.host else self.host
        return f"http://{shown}:{self.port}/?token={self.token}"

    def hosts(self) -> frozenset[str]:
        """Return the Host header values a request may carry."""
        shown = f"[{self.host}]" if ":" in self.host else self.host
        names = {shown}
        if self.host == LOOPBACK:
            names.add("localhost")
        return frozenset(f"{name}:{self.port}".lower() for name in names)


def bind(host: str, port: int) -> socket.socket:
    """Return a listening socket on ``host:port`` (port 0: a free one)."""
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    sock = socket.socket(family, socket.SOCK_STREAM)
    sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    try:
        sock.bind((host, port))
    except OSError:
        sock.close()
        raise
    sock.listen(64)
    sock.set_inheritable(True)
    return sock


def serve(
    edited: EditedStudy,
    sock: socket.socket,
    *,
    on_ready: Callable[[Address], None],
    token: str | None = None,
) -> None:
    """Serve the editor on ``sock`` until interrupted; ``on_ready`` is called once it listens."""
    import uvicorn

    from diagram.editor.app import make_app

    host, port = sock.getsockname()[:2]
    address = Address(host, port, token or secrets.token_urlsafe(24))
    app = make_app(edited, address.token, address.hosts())
    config = uvicorn.Config(
        app,
        log_level="warning",
        access_log=False,
        lifespan="off",
        server_header=False,
        date_header=False,
        timeout_graceful_shutdown=2,
    )
    server = uvicorn.Server(config)
    on_ready(address)
    server.run(sockets=[sock])
