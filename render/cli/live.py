"""The ``live`` command: a local web page that walks a visitor round the exhibit."""

from __future__ import annotations

import ipaddress
import sys
import webbrowser

from cloakview.render.cautions import cautions_text
from cloakview.render.cli import options as opt


def _server_parts():
    """The web stack (the optional extra ``cloakview[live]``), or a one-line error."""
    try:
        from cloakview.render.live import server  # needs cloakview[live]
        from cloakview.render.live.session import LiveSession
    except ImportError as error:
        raise opt.UsageError(f"live needs the web server packages ({error.name} is missing): "
                             "pip install 'cloakview[live]'") from None
    return server, LiveSession


def _is_loopback(host: str) -> bool:
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return host == "localhost"


def _live(args) -> int:
    server, live_session = _server_parts()
    size = opt.size(args.size) if args.size else None
    preview = opt.size(args.preview_size, "--preview-size") if args.preview_size else None
    session = live_session(args.scene, inventory=args.inventory, sight_lines=args.sight_lines,
                           viewer=args.viewer, full_size_px=size, preview_size_px=preview,
                           out=args.out, ideal=True if args.ideal else None,
                           allow_outside_paths=args.allow_outside_paths)
    sock = server.bind(args.host, args.port)
    print("cloakview live: warming up (one preview and one full frame)...", flush=True)
    session.warm_up()
    url = server.address(sock)
    if not _is_loopback(args.host):
        print(f"cloakview: warning: --host {args.host} lets other machines on the network "
              "open this page and write saved views into your --out folder; use it only on "
              "a network you trust", file=sys.stderr)
    print(f"cloakview live: serving {session.scene.title} at {url} (Ctrl+C stops)", flush=True)
    print(f"Saved views go to {session.out}.")
    print(cautions_text(), flush=True)
    if not args.no_browser:
        webbrowser.open(url)
    server.serve(session, sock)
    return 0


def add_commands(commands) -> None:
    """Register live."""
    c = commands.add_parser("live", help="open a local web page: drag a visitor across the "
                            "floor plan and watch the view, the numbers and the verdict "
                            "change (needs pip install 'cloakview[live]')")
    opt.add_scene(c)
    c.add_argument("--inventory", metavar="CSV", help="lens inventory whose lenses the page "
                   "offers for the outer and inner pairs")
    c.add_argument("--sight-lines", metavar="DIR", help="output folder of cloakview "
                   "sightlines for this scene: the plan shades where the effect works")
    c.add_argument("--size", metavar="WxH", help="picture size at rest, like 960x540 "
                   "(default: the viewer's)")
    c.add_argument("--preview-size", metavar="WxH", help="picture size while the eye is "
                   "dragged (default: 400 pixels wide, the viewer's aspect)")
    c.add_argument("--host", default="127.0.0.1", help="address to listen on (default "
                   "127.0.0.1: this machine only)")
    c.add_argument("--port", type=int, default=8765, help="port to listen on; 0 picks a "
                   "free one (default 8765)")
    c.add_argument("--no-browser", action="store_true", help="do not open a browser")
    opt.add_out(c, "cloakview-live", "saved views (added to, never cleared)")
    c.set_defaults(run=_live)
