"""The `cleaner` command: run the service, clean a file, or check a rules folder."""

from __future__ import annotations

import argparse
import contextlib
import os
import shutil
import sys
import tempfile
from collections.abc import Sequence
from pathlib import Path

from cleaner.config import Config
from cleaner.engine import default_rules, load_rules
from cleaner.rules import RulesError


def _serve(args: argparse.Namespace) -> int:
    # Each worker counts into files in this folder, so that a scrape answered by
    # any one of them reports all. It must be named before prometheus-client is
    # first imported, which the app does.
    own_folder = None
    if not os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        own_folder = os.environ["PROMETHEUS_MULTIPROC_DIR"] = tempfile.mkdtemp(
            prefix="cleaner-metrics-")
    master = os.getpid()
    try:
        return _run_server(args)
    finally:
        # Workers are forked inside _run_server and leave through here too:
        # only the master, at the end, may remove what they all write to.
        if own_folder and os.getpid() == master:
            shutil.rmtree(own_folder, ignore_errors=True)


def _run_server(args: argparse.Namespace) -> int:
    from gunicorn.app.base import BaseApplication
    from prometheus_client import multiprocess

    from cleaner.web import create_app, metrics

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

    def forget_worker(server, worker) -> None:
        multiprocess.mark_process_dead(worker.pid)

    def push_counts(server, worker) -> None:
        metrics.pending.push()   # what a stopping worker counted since its last push

    try:
        application = create_app(Config.from_env())
    except (RulesError, ValueError) as exc:
        print(f"cleaner: cannot start: {exc}", file=sys.stderr)
        return 2
    Server({"bind": f"{args.host}:{args.port}", "workers": args.workers,
            "worker_class": "sync", "timeout": args.timeout, "graceful_timeout": 20,
            "proc_name": "demographic-cleaner", "accesslog": None, "errorlog": "-",
            "loglevel": "warning", "child_exit": forget_worker, "worker_exit": push_counts}).run()
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


def _clean(args: argparse.Namespace) -> int:
    from cleaner import filejob, report
    from cleaner.options import InvalidInput, read_options

    try:
        fmt = filejob.detect_format(args.input, args.format)
        explicit = dict(_mapping(item) for item in args.map)
        options = read_options({key: value for key, value in (
            ("country", args.country), ("date_order", args.date_order),
            ("reference_date", args.reference_date), ("name_order", args.name_order))
            if value is not None}, Config.from_env().default_options())
        job = filejob.Job(options, explicit)
        default_rules()   # a broken rules folder stops here, before any output
    except (ValueError, RulesError) as exc:  # InvalidInput is a ValueError, its text the problems
        print(f"cleaner: {exc}", file=sys.stderr)
        return 2
    with _opened(args.input, "rb", sys.stdin.buffer) as source, \
            _opened(args.output, "w", sys.stdout) as sink:
        counting = filejob.CountingReader(source)
        size = os.path.getsize(args.input) if args.input != "-" else None
        progress = filejob.Progress(sys.stderr, size, lambda: counting.count)
        try:
            outcome = filejob.run(counting, sink, fmt, job, args.jobs, progress)
        except InvalidInput as exc:
            print(f"cleaner: {exc}", file=sys.stderr)
            return 2
    if args.report:
        Path(args.report).write_text(report.html(outcome, args.input), encoding="utf-8")
    return 0


def _mapping(item: str) -> tuple[str, str]:
    key, equals, column = item.partition("=")
    if not equals or not key or not column:
        raise ValueError(f"--map takes FIELD=COLUMN, such as family=\"Last Name\", not {item!r}")
    return key.strip(), column.strip()


@contextlib.contextmanager
def _opened(path: str, mode: str, standard):
    if path == "-":
        yield standard
        return
    with open(path, mode, **({} if "b" in mode else {"encoding": "utf-8", "newline": ""})) as handle:
        yield handle


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

    clean = commands.add_parser("clean", help="clean a CSV, NDJSON or JSON file of records")
    clean.add_argument("input", help="the file to read (- for standard input)")
    clean.add_argument("-o", "--output", required=True, help="the file to write (- for standard output)")
    clean.add_argument("--format", choices=("csv", "ndjson", "json"),
                       help="the kind of file (default: by the input's extension)")
    clean.add_argument("--country", help="default region for phones and addresses (ISO 3166-1)")
    clean.add_argument("--date-order", help="how numeric dates are read: MDY, DMY or YMD")
    clean.add_argument("--reference-date", help="the date today means (ISO 8601)")
    clean.add_argument("--name-order", help="given_first or family_first")
    clean.add_argument("--map", action="append", default=[], metavar="FIELD=COLUMN",
                       help="read a record key from this CSV column (repeatable)")
    clean.add_argument("--jobs", type=_at_least_one, default=os.cpu_count() or 1,
                       help="worker processes (default: one per core); output order is kept")
    clean.add_argument("--report", metavar="FILE.html",
                       help="also write a self-contained HTML data-quality report")
    clean.set_defaults(run=_clean)

    check = commands.add_parser("check-rules", help="validate a rules folder and print its version")
    check.add_argument("--dir", default=None, help="rules folder (default: the embedded rules)")
    check.set_defaults(run=_check_rules)
    return top


def main(argv: Sequence[str] | None = None) -> int:
    args = parser().parse_args(argv)
    return args.run(args)


if __name__ == "__main__":
    sys.exit(main())
