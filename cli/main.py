"""``wakeyard`` subcommands. Exit codes of ``run``: 0 done, 2 invalid spec, 3 run failed."""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="wakeyard", description="Queued 2D incompressible flow simulations.")
    sub = parser.add_subparsers(dest="command", required=True)
    p_run = sub.add_parser("run", help="compute one case on this machine")
    p_run.add_argument("spec", type=Path, help="job spec (JSON)")
    p_run.add_argument("--out", type=Path, required=True, help="folder for the result files")
    p_run.add_argument("--quiet", action="store_true", help="no progress bar")
    p_serve = sub.add_parser("serve", help="the web service and its workers on this machine")
    p_serve.add_argument("--host", default="127.0.0.1")
    p_serve.add_argument("--port", type=int, default=8000)
    p_serve.add_argument("--data", type=Path, help="data folder (default: WAKEYARD_DATA_DIR or ./data)")
    p_serve.add_argument(
        "--workers", type=int, help="worker processes (default: WAKEYARD_WORKERS or the cores; 0: only the API)"
    )
    p_serve.add_argument(
        "--api-processes",
        type=int,
        default=1,
        metavar="N",
        help="API processes sharing the port (default 1); the lease reaper runs in one of them",
    )
    p_worker = sub.add_parser(
        "worker",
        help="only workers: with --url on a box that reaches the service over HTTP alone, else sharing the broker, "
        "database and data folder",
    )
    p_worker.add_argument("--data", type=Path, help="data folder (with --url: this box's own, for running jobs)")
    p_worker.add_argument("--workers", type=int)
    p_worker.add_argument(
        "--url", help="the service (e.g. http://10.0.0.5:8000): claim jobs and upload results over HTTP"
    )
    p_worker.add_argument(
        "--token",
        default=os.environ.get("WAKEYARD_WORKER_TOKEN"),
        help="with --url: a worker token (`wakeyard token create NAME --worker`; default: WAKEYARD_WORKER_TOKEN)",
    )
    p_worker.add_argument(
        "--poll", type=float, default=1.0, metavar="SECONDS", help="with --url: how often an idle worker asks"
    )
    p_worker.add_argument(
        "--check",
        action="store_true",
        help="exit 0 if a worker process on this host reported in within the lease, else 1",
    )
    p_study = sub.add_parser(
        "study",
        help="submit a parameter study to a running service",
        description="Exit codes: 0 submitted (with --wait: all points succeeded), 1 a point "
        "failed or was cancelled or the service is unreachable, 2 study refused.",
    )
    p_study.add_argument("spec", type=Path, help="study spec (JSON): kind, base, vary or levels")
    p_study.add_argument("--url", default="http://127.0.0.1:8000", help="the service (default: %(default)s)")
    p_study.add_argument(
        "--token", default=os.environ.get("WAKEYARD_TOKEN"), help="API token (default: WAKEYARD_TOKEN)"
    )
    p_study.add_argument("--wait", action="store_true", help="wait for every point, then print the table (CSV)")
    p_study.add_argument("--fresh", action="store_true", help="run every point even if a result could be reused")
    p_migrate = sub.add_parser("migrate", help="bring the job store's schema up to date (serve does it too)")
    p_migrate.add_argument("--data", type=Path)
    p_token = sub.add_parser("token", help="API tokens")
    token_sub = p_token.add_subparsers(dest="token_command", required=True)
    p_create = token_sub.add_parser("create", help="create a token and print it (shown only once)")
    p_create.add_argument("name")
    p_create.add_argument("--admin", action="store_true", help="may change anyone's jobs and manage tokens")
    p_create.add_argument(
        "--worker", action="store_true", help="a compute box's token: only claims jobs and uploads their results"
    )
    p_create.add_argument("--expires", type=int, metavar="DAYS", help="stops working after DAYS days (default: never)")
    p_create.add_argument("--data", type=Path)
    p_list = token_sub.add_parser("list", help="the tokens: id, name, state, expiry, last use (never the secrets)")
    p_list.add_argument("--data", type=Path)
    p_revoke = token_sub.add_parser("revoke", help="revoke a token: the service refuses it within seconds")
    p_revoke.add_argument("id", help="its id, from `wakeyard token list`")
    p_revoke.add_argument("--data", type=Path)
    args = parser.parse_args(argv)
    if args.command == "run":
        return _run(args.spec, args.out, args.quiet)
    if args.command == "study":
        from .study import submit

        return submit(args.spec, args.url, args.token, args.wait, args.fresh)
    from . import service

    service.configure(getattr(args, "data", None), getattr(args, "workers", None))
    if args.command == "serve":
        if args.api_processes < 1:
            parser.error("--api-processes: at least 1")
        return service.serve(args.host, args.port, args.api_processes)
    if args.command == "migrate":
        return service.migrate()
    if args.command == "worker" and args.url:
        if args.check:
            parser.error("--check asks the job store: it works without --url only")
        if not args.token:
            parser.error("--url needs --token (or WAKEYARD_WORKER_TOKEN): a worker token")
        if args.poll <= 0:
            parser.error("--poll: more than 0 seconds")
        return service.remote_worker(args.url, args.token, args.poll)
    if args.command == "worker":
        return service.check_worker() if args.check else service.worker()
    from . import tokens

    if args.token_command == "create":
        return tokens.create(args.name, args.admin, args.expires, args.worker)
    return tokens.show() if args.token_command == "list" else tokens.revoke(args.id)


def _run(spec_path: Path, out: Path, quiet: bool) -> int:
    from wakeyard import solver
    from wakeyard.core.blas import one_blas_thread
    from wakeyard.solver.caution import caution_lines

    one_blas_thread()

    try:
        data = json.loads(spec_path.read_text())
    except (OSError, ValueError, RecursionError) as err:  # unreadable, not UTF-8, not JSON, nested too deep
        print(f"error: cannot read {spec_path}: {err}", file=sys.stderr)
        return 2
    try:
        spec = solver.load(data)
        solver.check_limits(spec, solver.Limits())
    except solver.SpecError as err:
        for field, message in err.problems:
            print(f"invalid spec: {field}: {message}", file=sys.stderr)
        return 2
    bar = None
    if not quiet:
        from tqdm import tqdm

        bar = tqdm(total=1000, unit="‰", bar_format="{l_bar}{bar}| {elapsed}<{remaining} {postfix}")

    def progress(p: solver.Progress) -> None:
        if bar is not None:
            bar.n = int(1000 * p.fraction)
            bar.set_postfix_str(p.message or f"t = {p.time:.4g} s")

    try:
        summary = solver.run(spec, out, progress=progress)
    except Exception as err:  # every failure is exit code 3 with one line, never a traceback
        if bar is not None:
            bar.close()
        reason = str(err) if isinstance(err, solver.RunFailed) else f"{type(err).__name__}: {err}"
        print(f"run failed: {reason}", file=sys.stderr)
        print("\n".join(caution_lines()), file=sys.stderr)  # partial results stay in the folder
        return 3
    if bar is not None:
        bar.n = 1000
        bar.close()
    print("\n".join(caution_lines()), file=sys.stderr)
    print(
        json.dumps(
            {
                k: summary[k]
                for k in ("bodies", "strouhal_number", "pressure_drop", "mesh", "unavailable", "wall_time_seconds")
                if k in summary
            },
            indent=2,
        )
    )
    return 0
