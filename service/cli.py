"""``firstcycle`` command line: ``serve`` runs the service, ``warmup`` fills numba's cache,
``openapi`` writes the contract."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path


def _serve(args: argparse.Namespace) -> int:
    import uvicorn

    from service.connection import HeaderDeadlineProtocol
    from service.settings import KeySourceError, get_settings

    os.environ.setdefault("OMP_NUM_THREADS", "1")
    try:  # fail closed before any worker starts: a key source that yields no key
        get_settings().keys()
    except KeySourceError as exc:
        print(f"firstcycle: refusing to start: {exc}", file=sys.stderr)
        return 2
    uvicorn.run(
        "service.app:app",
        host=args.host,
        port=args.port,
        workers=args.workers,
        log_level=args.log_level,
        proxy_headers=True,
        http=HeaderDeadlineProtocol,  # httptools with a deadline for the headers
        timeout_keep_alive=5,  # idle keep-alive connections closed after 5 s
    )
    return 0


def _openapi(args: argparse.Namespace) -> int:
    from service import contract
    from service.app import create_app

    paths = contract.write(Path(args.out), create_app().openapi())
    print(f"wrote {len(paths)} files under {args.out}")
    return 0


def _warmup(args: argparse.Namespace) -> int:
    from service import warmup
    from service.app import create_app

    os.environ.setdefault("OMP_NUM_THREADS", "1")
    seconds = warmup.run(create_app())
    print(f"warm-up done in {seconds:.1f} s (numba cache: {os.environ.get('NUMBA_CACHE_DIR')})")
    return 0


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``firstcycle`` console script."""
    parser = argparse.ArgumentParser(prog="firstcycle", description=__doc__)
    sub = parser.add_subparsers(dest="command", required=True)
    s = sub.add_parser("serve", help="run the HTTP service (uvicorn)")
    s.add_argument("--host", default=os.environ.get("FIRSTCYCLE_HOST", "127.0.0.1"))
    s.add_argument("--port", type=int, default=int(os.environ.get("FIRSTCYCLE_PORT", "8000")))
    s.add_argument("--workers", type=int, default=int(os.environ.get("FIRSTCYCLE_WORKERS", "1")))
    s.add_argument("--log-level", default="info")
    s.set_defaults(func=_serve)
    w = sub.add_parser(
        "warmup",
        help="compile every kernel into numba's cache (NUMBA_CACHE_DIR) and exit, e.g. while "
        "building an image",
    )
    w.set_defaults(func=_warmup)
    o = sub.add_parser("openapi", help="write openapi/v1/ (contract, schemas, examples)")
    o.add_argument("--out", default="openapi/v1")
    o.set_defaults(func=_openapi)
    args = parser.parse_args(argv)
    code: int = args.func(args)
    return code


if __name__ == "__main__":
    sys.exit(main())
