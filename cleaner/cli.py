"""The `cleaner` command: run the service, or check a rules folder."""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence

from cleaner.config import Config
from cleaner.engine import load_rules
from cleaner.rules import RulesError


def _serve(args: argparse.Namespace) -> int:
    from gunicorn.app.base import BaseApplication

    from cleaner.web import create_app

    class Server(BaseApplication):
        """Gunicorn run in this process, so SIGTERM to it stops the service gracefully."""

        def __init__(self, settings: dict):
            self.settings = settings
            super().__init__()

        def load_config(self) -> None:
            for key, value in self.settings.items():
                self.cfg.set(key, value)

        def load(self):
            return application

    try:
        application = create_app(Config.from_env())
    except (RulesError, ValueError) as exc:
        print(f"cleaner: cannot start: {exc}", file=sys.stderr)
        return 2
    Server({"bind": f"{args.host}:{args.port}", "workers": args.workers,
            "worker_class": "sync", "timeout": args.timeout, "graceful_timeout": 20,
            "proc_name": "demographic-cleaner", "accesslog": None, "errorlog": "-",
            "loglevel": "warning"}).run()
    return 0


def _check_rules(args: argparse.Namespace) -> int:
    try:
        rules = load_rules(args.dir)
    except RulesError as exc:
        print(f"cleaner: rules are not valid: {exc}", file=sys.stderr)
        return 1
    changes = sum(reason.kind == "change" for reason in rules.reasons.values())
    print(f"rules_version {rules.version}: {len(rules.reasons)} codes "
          f"({changes} changes, {len(rules.reasons) - changes} flags) in {len(rules.tables)} tables")
    return 0


def _at_least_one(text: str) -> int:
    number = int(text)
    if number < 1:
        raise argparse.ArgumentTypeError("must be 1 or more")
    return number


def parser() -> argparse.ArgumentParser:
    top = argparse.ArgumentParser(prog="cleaner", description=(
        "Standardise patient demographics before records are matched."))
    commands = top.add_subparsers(dest="command", required=True)

    serve = commands.add_parser("serve", help="run the HTTP service under gunicorn")
    serve.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1)")
    serve.add_argument("--port", type=int, default=8080, help="port (default 8080)")
    serve.add_argument("--workers", type=_at_least_one, default=os.cpu_count() or 1,
                       help="sync worker processes (default: one per core)")
    serve.add_argument("--timeout", type=_at_least_one, default=30,
                       help="seconds a worker may spend on one request before it is restarted")
    serve.set_defaults(run=_serve)

    check = commands.add_parser("check-rules", help="validate a rules folder and print its version")
    check.add_argument("--dir", default=None, help="rules folder (default: the embedded rules)")
    check.set_defaults(run=_check_rules)
    return top


def main(argv: Sequence[str] | None = None) -> int:
    args = parser().parse_args(argv)
    return args.run(args)


if __name__ == "__main__":
    sys.exit(main())
