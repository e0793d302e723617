"""``edgefit serve``: the service under waitress (a production WSGI server).

Registered as a subcommand of ``edgefit`` through the entry-point group ``edgefit.commands``
(see pyproject.toml), so the library never imports this package by name. Also runnable as
``python -m edgefit_web.serve`` with the same options.

On SIGTERM or SIGINT the server stops accepting requests, lets running fits finish (their
results are stored), leaves the rest of their jobs queued for the next start, and exits 0.
"""
from __future__ import annotations

import argparse
import ipaddress
import signal
import sys

DEFAULT_HOST = "127.0.0.1"
DEFAULT_PORT = 8350


class _Stop(SystemExit):
    """Raised in the main thread by the signal handler to leave the server loop (a SystemExit,
    so that waitress's loop passes it on instead of treating it as a connection's error)."""


def is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        return False


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--host", default=DEFAULT_HOST,
                   help=f"address to listen on (default {DEFAULT_HOST}; any other than "
                        "loopback needs --allow-remote)")
    p.add_argument("--port", type=int, default=DEFAULT_PORT,
                   help=f"port (default {DEFAULT_PORT}; 0 picks a free one)")
    p.add_argument("--data-dir", dest="data_dir", default=None,
                   help="archive directory (default: the per-user data directory)")
    p.add_argument("--allow-remote", action="store_true",
                   help="allow listening on an address other than loopback (the service "
                        "speaks plain HTTP: put it behind a TLS proxy on a shared network)")
    p.add_argument("--workers", type=int, default=None,
                   help="fit worker processes (default: the number of CPUs)")
    p.add_argument("--threads", type=int, default=8, help="HTTP threads (default 8)")
    p.add_argument("--max-upload-mb", type=float, default=None,
                   help="largest request in MB (default 20)")


def register(subparsers) -> None:
    """Add the ``serve`` subcommand to the ``edgefit`` command's subparsers."""
    p = subparsers.add_parser("serve", help="run the REST service (waitress)",
                              description="Run the edgefit service: archive, batch fitting "
                                          "and reports over REST.")
    add_arguments(p)
    p.set_defaults(func=run)


def _say(text: str) -> None:
    print(text, flush=True)


def run(args) -> int:
    """Run the server until SIGTERM/SIGINT; returns the exit code."""
    import waitress

    from edgefit import __version__
    from edgefit.archive import default_data_dir

    from . import create_app

    if not is_loopback(args.host) and not args.allow_remote:
        print(f"edgefit: error: refusing to listen on {args.host}, which is not a loopback "
              "address (fix: add --allow-remote to serve other machines, or use --host "
              f"{DEFAULT_HOST})", file=sys.stderr)
        return 2
    if not 0 <= args.port <= 65535:
        print(f"edgefit: error: --port {args.port} is not a port number (0..65535)",
              file=sys.stderr)
        return 2
    data_dir = args.data_dir or str(default_data_dir())
    config = {"DATA_DIR": data_dir}
    if args.workers:
        config["JOB_WORKERS"] = args.workers
    if args.max_upload_mb:
        config["MAX_CONTENT_LENGTH"] = int(args.max_upload_mb * 1024 * 1024)
    app = create_app(config)
    svc = app.extensions["edgefit"]
    try:
        # waitress buffers a body before the application sees it and refuses (in plain text)
        # what exceeds its own limit; above ours, and up to four times it, the application
        # answers 413 in JSON naming the limit.
        server = waitress.create_server(app, host=args.host, port=args.port,
                                        threads=args.threads, ident="edgefit",
                                        max_request_body_size=4 * app.config["MAX_CONTENT_LENGTH"]
                                        + 1024 * 1024)
    except OSError as exc:
        svc.close()
        print(f"edgefit: error: cannot listen on {args.host}:{args.port} ({exc.strerror or exc}) "
              "(fix: choose another --port, or stop the program that uses it)", file=sys.stderr)
        return 2
    except BaseException:
        svc.close()
        raise
    token = svc.archive.first_start_token()
    if token:
        _say("No API token existed, so an admin token was created (named 'first-start'). It "
             "is shown only now; only its hash is stored:")
        _say(f"  API token: {token}")
    elif not svc.archive.db.active_token_hashes():
        _say("warning: every API token is revoked; create one with `edgefit token create "
             f"--name NAME --data-dir {data_dir}`")
    svc.runner.warm_up()
    if svc.resumed:
        _say(f"resumed {len(svc.resumed)} unfinished job(s): "
             + ", ".join(map(str, svc.resumed)))
    port = server.effective_port
    host = args.host if ":" not in args.host else f"[{args.host}]"
    if not is_loopback(args.host):
        _say("warning: serving other machines over plain HTTP; use a TLS proxy on a shared "
             "network")
    _say(f"edgefit {__version__} serving on http://{host}:{port}/api/v1 "
         f"(data in {data_dir}); stop with Ctrl+C or SIGTERM")
    _say(f"web pages: open http://{host}:{port}/ and sign in with an API token")

    def _handler(signum, frame):
        raise _Stop(signum)

    previous = {s: signal.signal(s, _handler) for s in (signal.SIGTERM, signal.SIGINT)}
    try:
        server.run()            # returns once _Stop is raised (waitress catches SystemExit)
    except _Stop:
        pass
    finally:
        for s, h in previous.items():
            signal.signal(s, h)
        _say("stopping: finishing running fits ...")
        try:
            server.close()
        finally:
            svc.close()
        _say("stopped")
    return 0


def main(argv=None) -> int:
    p = argparse.ArgumentParser(prog="edgefit serve")
    add_arguments(p)
    return run(p.parse_args(argv))


if __name__ == "__main__":
    raise SystemExit(main())
