"""Command line: ``python -m service serve``, ``python -m service spec`` and ``python -m service demo``."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

SPEC_PATH = Path("openapi") / "openapi.json"


def spec_text() -> str:
    """The OpenAPI document exactly as committed under openapi/."""
    from service import __version__
    from service.api.registry import CALCULATIONS
    from service.api.spec import build_spec, document_text

    return document_text(build_spec(list(CALCULATIONS), __version__))


def _spec(args) -> int:
    text = spec_text()
    if args.output == "-":
        sys.stdout.write(text)
    else:
        Path(args.output).parent.mkdir(parents=True, exist_ok=True)
        Path(args.output).write_text(text, encoding="utf-8")
        print(f"wrote {args.output}")
    return 0


def _serve(args) -> int:
    from gunicorn.app.base import BaseApplication

    from service import gunicorn_conf

    class _Server(BaseApplication):
        def load_config(self):
            settings = {k: v for k, v in vars(gunicorn_conf).items()
                        if k in self.cfg.settings and not k.startswith("_") and v is not None}
            if args.host or args.port:
                default_host, _, default_port = settings.get("bind", "127.0.0.1:8080").rpartition(":")
                settings["bind"] = f"{args.host or default_host}:{args.port or default_port}"
            if args.workers:
                settings["workers"] = args.workers
            for key, value in settings.items():
                self.cfg.set(key, value)

        def load(self):
            from service import create_app

            return create_app()

    _Server().run()
    return 0


def _demo(args) -> int:
    from service.demo import run

    return run(args)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m service", description="Meanline preliminary-design service.")
    commands = parser.add_subparsers(dest="command", required=True)
    serve = commands.add_parser("serve", help="run the service under gunicorn (default 127.0.0.1:8080)")
    serve.add_argument("--host", help="address to listen on (default MEANLINE_HOST or 127.0.0.1)")
    serve.add_argument("--port", type=int, help="port to listen on (default MEANLINE_PORT or 8080)")
    serve.add_argument("--workers", type=int, help="worker processes (default MEANLINE_WORKERS or the CPU count)")
    serve.set_defaults(run=_serve)
    spec = commands.add_parser("spec", help="write the OpenAPI document (default openapi/openapi.json)")
    spec.add_argument("--output", default=str(SPEC_PATH), help="file to write, or - for standard output")
    spec.set_defaults(run=_spec)
    demo = commands.add_parser("demo", help="preliminary design of a fictional gas turbine through the service")
    demo.set_defaults(run=_demo)
    from service.demo import add_arguments

    add_arguments(demo)
    args = parser.parse_args(argv)
    return args.run(args)


if __name__ == "__main__":
    sys.exit(main())
