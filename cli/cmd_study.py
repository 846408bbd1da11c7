"""`tunnelstack study CASE --output FILE`: run the case's [study] into an HDF5 file.

Running the same command again on the same file resumes: finished points are
kept, only the missing ones are computed. Exit codes: 0 all points done,
1 some points failed (recorded in the file), 2 bad input, 130 interrupted.
"""
from __future__ import annotations

import importlib
import os
import shlex
import sys
from pathlib import Path

NAME = "study"
HELP = "run the case's parameter study into an HDF5 file (resumes an unfinished one)"


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", help="case file (TOML) with a [study] section")
    parser.add_argument("-o", "--output", metavar="FILE",
                        help="study file to write or resume (default: CASE with suffix .study.h5)")
    where = parser.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, default=0, metavar="N",
                       help="local worker processes (default 0 = all cores; 1 = serial, in this process)")
    where.add_argument("--scheduler", metavar="ADDRESS",
                       help="run on a Dask distributed scheduler, e.g. tcp://scheduler-host:8786 "
                            "(needs the optional 'cluster' extra)")
    where.add_argument("--local-cluster", type=int, metavar="N",
                       help="run on a Dask cluster of N worker processes on this machine (127.0.0.1)")
    parser.add_argument("--restart", action="store_true",
                        help="discard the results in FILE and start over (also when the case changed)")
    parser.add_argument("--retry-failed", action="store_true",
                        help="compute the points that failed before once more")
    parser.add_argument("--compute", metavar="NAME",
                        help="point computation, overriding study.compute in the case")
    parser.add_argument("--keep-profiles", action="store_true",
                        help="keep every profile output, as study.keep_profiles = true")
    parser.add_argument("--plugin", action="append", default=[], metavar="MODULE",
                        help="import MODULE first (it may register more point computations); repeatable")
    parser.add_argument("--quiet", action="store_true", help="no progress line and no summary")


def default_output(case_path) -> Path:
    p = Path(case_path)
    return p.with_name(p.stem + ".study.h5")


def _command_line(args) -> str:
    parts = ["tunnelstack", "study", str(args.case), "--output", str(args.output)]
    if args.scheduler:
        parts += ["--scheduler", args.scheduler]
    elif args.local_cluster is not None:
        parts += ["--local-cluster", str(args.local_cluster)]
    else:
        parts += ["--workers", str(args.workers)]
    for flag in ("restart", "retry_failed", "keep_profiles"):
        if getattr(args, flag):
            parts.append("--" + flag.replace("_", "-"))
    if args.compute:
        parts += ["--compute", args.compute]
    for mod in args.plugin:
        parts += ["--plugin", mod]
    return shlex.join(parts)


def run(args) -> int:
    from solver.case import load_case
    from solver.errors import CaseError
    from solver.executors import make_executor
    from solver.store import open_study
    from solver.study import Progress, StudyInterrupted, plan_study, run_study

    for module in args.plugin:
        try:
            importlib.import_module(module)
        except ImportError as err:
            raise CaseError(f"--plugin {module}: cannot import it ({err})") from None
    if args.local_cluster is not None and args.local_cluster < 1:
        raise CaseError(f"--local-cluster: must be >= 1 worker process, got {args.local_cluster}")
    if args.output is None:
        args.output = str(default_output(args.case))
    case = load_case(args.case)
    plan = plan_study(case, compute=args.compute, keep_profiles=True if args.keep_profiles else None)

    def note(text):
        print(text, file=sys.stderr)

    with open_study(args.output, plan, case_text=case.text, command=_command_line(args),
                    restart=args.restart, notice=note) as sink:
        finished, failed, total = sink.counts()
        todo = len(sink.pending(args.retry_failed))
        if todo == 0:
            if not args.quiet:
                print(f"{args.output}: all {total} points already finished ({failed} failed); "
                      "nothing to compute")
            return 1 if failed else 0
        workers = args.workers
        if workers == 0 and args.scheduler is None and args.local_cluster is None:
            workers = max(1, min(os.cpu_count() or 1, todo))  # no idle processes for a short study
        executor = make_executor(workers=workers, scheduler=args.scheduler,
                                 local_cluster=args.local_cluster, warm_ups=plan.compute.warm_up)
        with executor:
            if not args.quiet:
                resumed = f", resuming: {total - todo} already finished" if todo < total else ""
                print(f"study {plan.compute.name!r}: {total} points over "
                      f"{' x '.join(a.key for a in plan.axes)} ({plan.mode}){resumed}; "
                      f"{executor.describe()}", file=sys.stderr)
            progress = Progress(total, quiet=args.quiet)
            try:
                summary = run_study(plan, sink, executor=executor, retry_failed=args.retry_failed,
                                    progress=progress, notice=note)
            except StudyInterrupted as stop:
                s = stop.summary
                note(f"interrupted: {s.finished} of {s.total} points saved in {args.output}; "
                     "run the same command again to resume")
                return 130
    if not args.quiet:
        rate = summary.computed / summary.elapsed_s if summary.elapsed_s > 0 else float("nan")
        print(f"{args.output}: {summary.finished}/{summary.total} points finished, "
              f"{summary.failed} failed; computed {summary.computed} in {summary.elapsed_s:.1f} s "
              f"({rate:.2f} points/s)")
        if summary.failed:
            print(f"see the errors with `tunnelstack show {args.output}`")
    return 1 if summary.failed else 0
