"""Command line: argument parsing, exit codes, progress. No algorithms here.

Exit codes: 0 done; 1 the input has errors (nothing written); 2 usage error; 130 interrupted.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import re
import signal
import sys
import tempfile
import time
from collections import Counter

from costing import __version__
from costing.collector import fewer_collections
from costing.contract.inputs import OBJECTIVES
from costing.errors import UsageError
from costing.model import ERROR, WARNING, Problem

EXIT_OK, EXIT_INPUT, EXIT_USAGE = 0, 1, 2
EXIT_CODES_HELP = ("exit codes: 0 done (warnings, if any, are printed and listed on the Problems sheet); "
                   "1 the input has errors, or the output could not be written: nothing written; "
                   "2 usage error (unknown option, missing file, OUTPUT exists without --overwrite); "
                   "130 interrupted (Ctrl-C).")


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # usage errors exit 2 with a short message
        self.print_usage(sys.stderr)
        print(f"costing: error: {message}", file=sys.stderr)
        raise SystemExit(EXIT_USAGE)


def _parser() -> argparse.ArgumentParser:
    p = _Parser(prog="costing", description="Cost freight shipments over a lane network: reads an "
                "input workbook, finds each shipment's least-cost route (A* search) and writes a new, "
                "auditable costed workbook.", epilog=EXIT_CODES_HELP)
    p.add_argument("--version", action="version", version=f"costing {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True

    t = sub.add_parser("template", help="write the blank input template",
                       description="Write the blank input workbook: every sheet and column, with a "
                       "note on each header, dropdowns and number formats.")
    t.add_argument("path", metavar="PATH", help="where to write the template (.xlsx)")
    t.add_argument("--overwrite", action="store_true", help="replace PATH if it exists")

    c = sub.add_parser("check", help="validate an input workbook and list its problems",
                       description="Validate INPUT and print every problem as Sheet!Cell: message "
                       "(fix). Exit 0 when there are no errors, 1 when there are.", epilog=EXIT_CODES_HELP)
    c.add_argument("input", metavar="INPUT", help="input workbook (.xlsx)")

    r = sub.add_parser("run", help="cost the shipments of an input workbook",
                       description="Validate INPUT, route and cost every shipment, and write the costed "
                       "workbook OUTPUT. On input errors nothing is written and the exit code is 1.",
                       epilog=EXIT_CODES_HELP)
    r.add_argument("input", metavar="INPUT", help="input workbook (.xlsx); never modified")
    r.add_argument("-o", "--output", metavar="OUTPUT", required=True, help="costed workbook to write")
    _common(r)
    r.add_argument("--workers", metavar="N", type=int, default=None,
                   help="run on N local Dask worker processes (needs costing[dask]); the week is split "
                   "into shards by ready day (and origin when consolidate is no); the result is the "
                   "same as without")
    r.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help="run on the Dask cluster whose scheduler is at ADDRESS (e.g. tcp://10.0.0.5:8786); "
                   "its workers need this version of costing installed")
    r.add_argument("--parquet", action="store_true",
                   help="write the Summary shipment rows, Legs and Vehicle runs as Parquet files in a folder "
                   "beside OUTPUT (OUTPUT.parquet/); OUTPUT keeps the totals, Problems and Run (needs "
                   "costing[parquet]); automatic when the shipments pass the spreadsheet's row limit")

    d = sub.add_parser("demo", help="cost the bundled example workbook",
                       description="Write the bundled example input and cost it: the quickest way to "
                       "see what the tool produces.")
    d.add_argument("-o", "--output", metavar="OUTPUT", default=None,
                   help="costed workbook to write (default: costing-demo.xlsx, or the next free "
                   "name costing-demo-2.xlsx, ... so earlier output is kept)")
    d.add_argument("--input-copy", metavar="PATH", default=None,
                   help="also save the example input workbook to PATH, to look at or edit")
    _common(d)

    m = sub.add_parser("compare", help="compare two costed workbooks (e.g. last week and this week)",
                       description="Match shipments by shipment_id across two costed workbooks written "
                       "by `costing run` and write DIFF: cost, route and status changes, shipments added "
                       "and removed, the change in the total, and a cost bridge (the change step by step: "
                       "shipments removed and added, routes lost or found, rates, fuel price, loads, "
                       "re-routing, vehicles, consolidation).")
    m.add_argument("old", metavar="OLD", help="earlier costed workbook")
    m.add_argument("new", metavar="NEW", help="later costed workbook")
    m.add_argument("-o", "--output", metavar="DIFF", required=True, help="comparison workbook to write")
    m.add_argument("--old-input", metavar="OLD_INPUT", default=None,
                   help="the input workbook OLD was costed from: OLD weights, fuel price, and lanes or "
                   "rate cards the new input dropped, for the cost bridge")
    m.add_argument("--new-input", metavar="NEW_INPUT", default=None,
                   help="the input workbook NEW was costed from: the bridge prices the old routes at its "
                   "rates to separate rates, fuel, load, re-routing and vehicle changes (without it "
                   "those steps are n/a)")
    m.add_argument("--overwrite", action="store_true", help="replace DIFF if it exists")
    m.add_argument("--quiet", action="store_true", help="print only errors")

    a = sub.add_parser("addon", help="the LibreOffice Calc extension (Route costing menu)",
                       description="Build the LibreOffice Calc extension; install it with `unopkg add`.")
    a_sub = a.add_subparsers(dest="addon_command", metavar="ACTION", parser_class=_Parser)
    a_sub.required = True
    b = a_sub.add_parser("build", help="write the extension (.oxt)",
                         description="Write the Route costing extension. It finds costing in the folders "
                         "this Python imports it from (recorded in the extension), COSTING_PYTHONPATH, "
                         "or LibreOffice's own Python.")
    b.add_argument("-o", "--output", metavar="PATH", default="costing.oxt", help="default: costing.oxt")
    b.add_argument("--python-path", metavar="DIRS", default=None,
                   help="folders holding costing and its dependencies, for LibreOffice's Python "
                   "(default: where this Python finds them; '' for none)")
    b.add_argument("--overwrite", action="store_true", help="replace PATH if it exists")
    _import_network_parser(sub)
    return p


def _common(p):
    p.add_argument("--objective", choices=OBJECTIVES, default=None,
                   help="objective for shipments that do not name one (overrides Settings)")
    p.add_argument("--single-process", action="store_true",
                   help="do everything in this process (by default, with two or more cores, some searches, "
                   "the map and part of the writing run in a second one; the workbook is the same)")
    p.add_argument("--overwrite", action="store_true", help="replace OUTPUT if it exists")
    p.add_argument("--quiet", action="store_true", help="print only errors")


def main(argv: list[str] | None = None) -> int:
    """The ``costing`` command. Returns the exit code: 0 done, 1 input errors (nothing
    written), 2 usage error; 130 when interrupted."""
    args = _parser().parse_args(argv)
    try:
        if args.command == "template":
            return _template(args)
        if args.command == "check":
            return _check(args)
        if args.command == "run":
            return _run(args.input, args.output, args)
        if args.command == "demo":
            return _demo(args)
        if args.command == "compare":
            return _compare(args)
        if args.command == "addon":
            return _addon(args)
        if args.command == "import-network":
            return _import_network(args)
    except UsageError as e:
        print(f"costing: error: {e}", file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("costing: interrupted; no output written, earlier output left as it was", file=sys.stderr)
        return 130
    except Terminated as e:
        print(f"costing: stopped by {e.name}; no output written, earlier output left as it was",
              file=sys.stderr)
        return 128 + e.signum
    except OSError as e:  # disk full, permission denied, ... while writing
        print(f"costing: error: could not write the output: {e.strerror or e}; nothing written, earlier "
              "output left as it was (check the folder's free space and permissions)", file=sys.stderr)
        return EXIT_INPUT
    return EXIT_USAGE


def _template(args) -> int:
    from costing.workbook.template import write_template

    _check_output_path(args.path, None, args.overwrite)
    _atomic_write(args.path, write_template)
    print(f"template written: {args.path}")
    return EXIT_OK


# More than FLOOD problems of one kind are summarised on stderr: the first SHOWN in full, then
# one line with the count and the next cells.
FLOOD, SHOWN = 10, 3
_VARYING = re.compile(r"'[^']*'|\S*\d\S*")


def _kind(p: Problem) -> tuple[str, str, str, str]:
    """Problems of one kind share severity, sheet and wording once quoted values and anything
    with a digit (ids, figures, cells) are blanked out."""
    return p.severity, p.sheet, _VARYING.sub("#", p.message), _VARYING.sub("#", p.fix)


def _problem_lines(problems: list[Problem], full_list: str) -> list[str]:
    """stderr lines for `problems`: each one, except that a kind with more than FLOOD members
    shows its first SHOWN and then one line with how many more and where (`full_list` says
    where every one is listed)."""
    kinds = [_kind(p) for p in problems]
    counts = Counter(kinds)
    members: dict[tuple, list[str]] = {}
    for p, k in zip(problems, kinds):
        if counts[k] > FLOOD and len(members.setdefault(k, [])) < 2 * SHOWN:
            members[k].append(p.where)
    cells = {k: where[SHOWN:] for k, where in members.items()}
    seen: Counter = Counter()
    lines = []
    for p, k in zip(problems, kinds):
        seen[k] += 1
        if counts[k] <= FLOOD or seen[k] <= SHOWN:
            lines.append(f"{p.severity}: {p}")
        elif seen[k] == SHOWN + 1:
            more = counts[k] - SHOWN
            rest = f" and {more - len(cells[k]):,} more" if more > len(cells[k]) else ""
            lines.append(f"{p.severity}: {more:,} more {p.severity}s like the one above ("
                         f"{counts[k]:,} in all), at {', '.join(cells[k])}{rest}; {full_list}")
    return lines


def unique_problems(problems) -> list[Problem]:
    """`problems` in order, each finding once (validation and routing may both report one)."""
    seen, out = set(), []
    for p in problems:
        key = (p.severity, p.sheet, p.cell, p.message)
        if key not in seen:
            seen.add(key)
            out.append(p)
    return out


def _print_problems(problems: list[Problem], quiet: bool = False, full_list: str = "") -> None:
    problems = unique_problems(problems)
    shown = [p for p in problems if p.severity == ERROR or (not quiet and p.severity == WARNING)]
    for line in _problem_lines(shown, full_list or "full list on the Problems sheet"):
        print(line, file=sys.stderr)


def _check(args) -> int:
    from costing import pipeline

    if not os.path.exists(args.input):
        raise UsageError(f"input file not found: {args.input}")
    model, problems, _ = pipeline.load(args.input)
    problems = unique_problems(problems)
    errors = [p for p in problems if p.severity == ERROR]
    for p in problems:
        print(f"{p.severity}: {p}")
    if model is not None and not errors:
        warnings = sum(p.severity == WARNING for p in problems)
        infos = len(problems) - warnings
        extra = f" and {infos} info line(s)" if infos else ""
        print(f"OK: {len(model.depots)} depots, {len(model.lanes)} lanes, {len(model.rates)} rate cards, "
              f"{len(model.shipments)} shipments; {warnings} warning(s){extra} above, no errors")
        return EXIT_OK
    print(f"{len(errors)} error(s); fix them and check again", file=sys.stderr)
    return EXIT_INPUT


def _check_output_path(output: str, input_path: str | None, overwrite: bool) -> None:
    if not output.lower().endswith(".xlsx"):
        raise UsageError(f"OUTPUT must end in .xlsx: {output}")
    folder = os.path.dirname(os.path.abspath(output))
    if not os.path.isdir(folder):
        raise UsageError(f"the folder of OUTPUT does not exist: {folder}")
    if input_path is not None and os.path.exists(output) and os.path.exists(input_path) and \
            os.path.samefile(output, input_path):
        raise UsageError("OUTPUT is the INPUT workbook; the input is never overwritten. "
                         "Choose another OUTPUT name")
    if input_path is not None and os.path.abspath(output) == os.path.abspath(input_path):
        raise UsageError("OUTPUT is the INPUT workbook; choose another OUTPUT name")
    if os.path.exists(output) and not overwrite:
        raise UsageError(f"{output} exists; add --overwrite to replace it, or choose another name")


class Terminated(BaseException):
    """SIGTERM or SIGHUP arrived: unwinds like Ctrl-C, so the part file is removed."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum
        self.name = signal.Signals(signum).name


def _raise_terminated(signum, _frame):
    raise Terminated(signum)


@contextlib.contextmanager
def _stop_signals_unwind():
    """While the block runs, SIGTERM and SIGHUP raise Terminated (as Ctrl-C raises
    KeyboardInterrupt), so `finally` and `except BaseException` clean-ups run. Outside the main
    thread (where handlers cannot be set), and for a signal whose handler the host program set
    outside Python (getsignal gives None, e.g. inside the spreadsheet application that runs the
    add-on), nothing changes: that handler could not be put back."""
    wanted = [getattr(signal, n) for n in ("SIGTERM", "SIGHUP") if hasattr(signal, n)]
    old = {}
    try:
        for sig in wanted:
            if signal.getsignal(sig) is None:
                continue
            old[sig] = signal.signal(sig, _raise_terminated)
    except ValueError:  # not the main thread
        pass
    try:
        yield
    finally:
        for sig, handler in old.items():
            signal.signal(sig, handler)


def _test_pause(tmp: str) -> None:
    """Tests only: with COSTING_TEST_PAUSE_WRITE=FLAG set, announce the part file by writing its
    path to FLAG, then wait up to 60 s, so a test can send a signal mid-write."""
    flag = os.environ.get("COSTING_TEST_PAUSE_WRITE")
    if not flag:
        return
    with open(flag + ".tmp", "w") as f:
        f.write(tmp)
    os.replace(flag + ".tmp", flag)  # the flag appears complete
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        time.sleep(0.05)


def _atomic_write(output: str, write) -> None:
    """Write to a temporary file beside OUTPUT and rename it into place only when complete,
    so a failed or interrupted (Ctrl-C, SIGTERM, SIGHUP) run leaves no partial file and any
    earlier OUTPUT intact."""
    folder = os.path.dirname(os.path.abspath(output))
    with _stop_signals_unwind():
        _atomic_write_here(output, write, folder)


def _atomic_write_here(output: str, write, folder: str) -> None:
    fd, tmp = tempfile.mkstemp(prefix=".costing-", suffix=".xlsx.part", dir=folder)
    os.close(fd)
    try:
        _test_pause(tmp)
        write(tmp)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; give the usual file mode
        os.replace(tmp, output)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


class _Progress:
    """A progress bar on stderr (tqdm) for a stage of the run: shown only when stderr is a
    terminal and only once the stage has run for PROGRESS_DELAY seconds; silent otherwise."""

    def __init__(self, label: str, min_total: int = 50):
        self.on = sys.stderr.isatty()
        self.label = label
        self.min_total = min_total
        self.bar = None

    def __call__(self, done: int, total: int) -> None:
        if not self.on or total < self.min_total:
            return
        if self.bar is None:
            from tqdm import tqdm

            class Bar(tqdm):
                monitor_interval = 0  # no monitor thread: the run stays one thread (costing.aside)

            self.bar = Bar(total=total, desc=self.label, unit="shipment", file=sys.stderr,
                            delay=PROGRESS_DELAY, leave=False, dynamic_ncols=True)
        self.bar.update(done - self.bar.n)
        if done >= total:
            self.bar.close()


PROGRESS_DELAY = 2.0  # seconds a stage runs before its progress bar appears


def _run(input_path: str, output: str, args, input_label: str | None = None) -> int:
    from costing import aside

    with aside.one_process() if getattr(args, "single_process", False) else contextlib.nullcontext():
        return _run_here(input_path, output, args, input_label)


@fewer_collections()  # costing.collector: one block for load, run, map and write
def _run_here(input_path: str, output: str, args, input_label: str | None = None) -> int:
    from costing import aside, pipeline
    from costing.sheets.map import start_map
    from costing.sheets.writer import OutputLimitError, RunInfo, run_time, write_costed

    if not os.path.exists(input_path):
        raise UsageError(f"input file not found: {input_path}")
    _check_output_path(output, input_path, args.overwrite)
    times: dict[str, float] = {}
    started = t0 = time.perf_counter()
    model, problems, digest = pipeline.load(input_path)
    times["read and validate"] = time.perf_counter() - t0
    errors = [p for p in problems if p.severity == ERROR]
    if model is None or errors:
        _print_problems(problems, quiet=True, full_list=f"full list: `costing check {input_path}`")
        print(f"costing: {len(errors)} error(s) in {input_path}; nothing written. "
              f"Run `costing check {input_path}` for the full list.", file=sys.stderr)
        return EXIT_INPUT
    parquet = _parquet_choice(model, output, args)
    options = pipeline.Options(objective=args.objective, progress=_Progress, aside=True)
    if getattr(args, "workers", None) is not None or getattr(args, "scheduler", None):
        costed = _run_distributed(model, options, args)
    else:
        costed = pipeline.run(model, options)
    results, scenario_runs, analysis = costed.results, costed.scenarios, costed.analysis
    problems = costed.problems
    t0 = time.perf_counter()
    title = f"{input_label or os.path.basename(input_path)}: lanes and routed tonnes"
    # the map is drawn in a second process while the sheets are written (costing.aside), when
    # forking is available and the week is large enough to gain from it; else here and now
    map_png = None if parquet else start_map(model, analysis.lanes, title,
                                             fork=len(results) >= pipeline.ASIDE_SHIPMENTS)
    times.update(costed.seconds)
    times["map (drawn in a second process while the sheets are written)"
          if isinstance(map_png, aside.Job) else "map"] = time.perf_counter() - t0
    stats = costed.stats
    stats.seconds = {**times, **stats.seconds}
    info = RunInfo(input_label or os.path.basename(input_path), digest, args.objective, run_time(), stats)
    if model.settings.network_file:  # the network the routes ran on, for the audit
        info.extra["network file"] = _network_file_note(input_path, model.settings.network_file)
    t0 = time.perf_counter()
    try:
        bridges = _scenario_bridges(model, results, scenario_runs)
        if parquet:
            _write_parquet_set(output, parquet, model, results, problems, info, costed.runs, scenario_runs,
                               bridges)
        else:
            _atomic_write(output, lambda p: write_costed(p, model, results, problems, info, analysis, map_png,
                                                            scenario_runs, costed.runs, bridges))
    except OutputLimitError as e:
        print(f"costing: error: {e.message}; nothing written ({e.fix})", file=sys.stderr)
        return EXIT_INPUT
    finally:
        if isinstance(map_png, aside.Job):
            map_png.close()  # a child still drawing when the write failed
    if not args.quiet:
        _print_problems(problems)
        sys.stderr.flush()
        routed = sum(r.status == "routed" for r in results)
        total = sum(r.total_cost for r in results if r.status == "routed")
        unrouted = len(results) - routed
        extra = f" ({unrouted} not routed: see the note on the Summary sheet)" if unrouted else ""
        scen = f"; {len(scenario_runs)} scenario(s) on the Scenario comparison sheet" if scenario_runs else ""
        if parquet:
            output = f"{output} and {parquet[0]}{os.sep}"
        print(f"{routed} of {len(results)} shipments routed{extra}; total {total:,.2f} "
              f"{model.settings.currency}{scen}; wrote {output} in {time.perf_counter() - started:.1f} s; "
              "hours and CO2e are planning estimates, not legal or compliance advice")
    return EXIT_OK


def _parquet_choice(model, output: str, args) -> tuple[str, str] | None:
    """(folder, reason) when the run writes a Parquet set beside OUTPUT (``--parquet``, or more
    shipments than one Summary sheet holds, or more scenario rows than one Scenario shipments sheet
    holds, and pyarrow installed), else None."""
    from costing.sheets import parquet_set
    from costing.sheets.formats import MAX_ROWS

    asked = bool(getattr(args, "parquet", False))
    over = len(model.shipments) + 2 > MAX_ROWS
    scenario_rows = len(model.scenarios) * len(model.shipments)
    over_scenarios = not over and scenario_rows + 2 > MAX_ROWS
    if not (asked or over or over_scenarios):
        return None
    if not parquet_set.have_pyarrow():
        if asked:
            raise UsageError(parquet_set.PARQUET_MISSING)
        return None  # the writer stops at the row limit with a message naming the fix
    folder = parquet_set.parquet_folder(output)
    problem = parquet_set.check_folder(folder, args.overwrite)
    if problem:
        raise UsageError(problem)
    if asked:
        return folder, "--parquet"
    reason = (f"{len(model.shipments):,} shipments do not fit on one Summary sheet ({MAX_ROWS:,} rows, "
              "the spreadsheet's limit)")
    if over_scenarios:
        reason = (f"{len(model.scenarios)} scenarios of {len(model.shipments):,} shipments do not fit on one "
                  f"Scenario shipments sheet ({MAX_ROWS:,} rows, the spreadsheet's limit)")
    if not args.quiet:
        print(f"costing: {reason}: the Summary shipment rows, Legs, Vehicle runs (and any scenario rows) "
              f"go to Parquet files in {folder}{os.sep}; {output} keeps the totals, Problems and Run",
              file=sys.stderr)
    return folder, reason


def _write_parquet_set(output: str, parquet: tuple[str, str], model, results, problems, info, runs,
                       scenario_runs=(), bridges=()) -> None:
    """The Parquet set and the summary workbook, each put in place only when complete: the files
    go to a part folder beside OUTPUT, renamed into place just before the workbook is. The
    scenarios' rows go to the set, their Scenario comparison and bridge to the workbook."""
    import shutil

    from costing.sheets import parquet_set

    folder, reason = parquet
    tmp = tempfile.mkdtemp(prefix=".costing-", suffix=".parquet.part",
                           dir=os.path.dirname(os.path.abspath(output)))
    placed = False

    def write(path: str) -> None:
        nonlocal placed
        parquet_set.write_parquet_set(path, tmp, model, results, problems, info, runs,
                                      label=os.path.basename(folder), reason=reason,
                                      scenario_runs=scenario_runs, scenario_bridges=bridges)
        parquet_set.commit_folder(tmp, folder)
        placed = True

    try:
        _atomic_write(output, write)
    except BaseException:
        if placed and os.path.isdir(folder):
            shutil.rmtree(folder)
        raise
    finally:
        if os.path.isdir(tmp):
            shutil.rmtree(tmp)


def _network_file_note(input_path: str, name: str) -> str:
    """``NAME: SHA-256 ...`` of the network file Settings network_file names (relative to the input)."""
    import hashlib

    h = hashlib.sha256()
    with open(os.path.join(os.path.dirname(os.path.abspath(input_path)), name), "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return f"{name}: SHA-256 {h.hexdigest()} (depots and lanes read from it, beside the sheets' own)"


def _run_distributed(model, options, args):
    """``costing.distributed.run`` on a local cluster of ``--workers`` or at ``--scheduler``."""
    from costing import distributed

    if args.workers is not None and args.workers < 1:
        raise UsageError(f"--workers must be 1 or more, not {args.workers}")
    if args.workers is not None and args.scheduler:
        raise UsageError("give --workers (a local cluster) or --scheduler (an existing one), not both")
    try:
        import dask.distributed  # noqa: F401
    except ImportError:
        raise UsageError(distributed.DASK_MISSING) from None
    if args.scheduler:
        try:
            client = distributed.connect(args.scheduler)
        except (OSError, ValueError, TimeoutError) as e:
            raise UsageError(f"cannot reach the Dask scheduler at {args.scheduler}: {e}") from None
    else:
        client = distributed.local_client(args.workers)
    try:
        if not args.quiet:
            print(f"running on Dask: {len(client.nthreads())} workers", file=sys.stderr)
        return distributed.run(model, options, client)
    finally:
        cluster = None if args.scheduler else client.cluster
        client.close()
        if cluster is not None:
            cluster.close()


def _compare(args) -> int:
    from costing.compare.bridge import bridge_workbooks
    from costing.compare.diff import CompareError, compare, read_costed, write_comparison

    for path in (args.old, args.new, args.old_input, args.new_input):
        if path is not None and not os.path.exists(path):
            raise UsageError(f"file not found: {path}")
    _check_output_path(args.output, args.old, args.overwrite)
    for path in (args.new, args.old_input, args.new_input):
        if path is not None and os.path.exists(args.output) and os.path.samefile(args.output, path):
            raise UsageError(f"DIFF is {path}; choose another name")
    try:
        old, new = read_costed(args.old), read_costed(args.new)
        cmp = compare(old, new)
        models = [_compare_input(path, run) for path, run in ((args.old_input, old), (args.new_input, new))]
        bridge = bridge_workbooks(old, new, old_model=models[0], new_model=models[1])
    except CompareError as e:
        print(f"costing: error: {e.message} ({e.fix})", file=sys.stderr)
        return EXIT_INPUT
    _atomic_write(args.output, lambda p: write_comparison(p, cmp, bridge))
    if not args.quiet:
        for warning in cmp.warnings + bridge.warnings:
            print(f"warning: {warning}", file=sys.stderr)
        counts = ", ".join(f"{n} {k}" for k, n in cmp.counts.items() if n)
        print(f"{counts}; total {cmp.old_total:,.2f} -> {cmp.new_total:,.2f} {cmp.currency} "
              f"({cmp.total_delta:+,.2f}); wrote {args.output}")
        p = bridge.places
        moves = [f"{s.label.lower()} {s.units / 10 ** p:+,.{p}f}" for s in bridge.steps[1:-1] if s.units]
        na = [s.label.lower() for s in bridge.steps[1:-1] if not s.available]
        print("bridge: " + (", ".join(moves) or "no change")
              + (f"; n/a: {', '.join(na)}" if na else ""))
    return EXIT_OK


def _scenario_bridges(model, results, scenario_runs) -> list:
    """(scenario name, Bridge) from the base case to each scenario (costing.compare.bridge), for
    the Scenario bridge sheets."""
    from costing.check.scenarios import apply_scenario
    from costing.compare.bridge import bridge_results

    return [(sr.scenario.name, bridge_results(results, sr.results, model, apply_scenario(model, sr.scenario),
                                              "base case", sr.scenario.name)) for sr in scenario_runs]


def _compare_input(path: str | None, run):
    """The checked Model of the input a costed workbook was costed from, or None without `path`.
    Raises CompareError when it cannot be read, has errors, or is not that input (SHA-256)."""
    from costing.compare.diff import CompareError
    from costing.pipeline import load

    if path is None:
        return None
    model, problems, sha = load(path)
    name = os.path.basename(path)
    errors = [p for p in problems if p.severity == ERROR]
    if model is None or errors:
        first = errors[0] if errors else None
        raise CompareError(f"{name} cannot be used for the bridge: {first or 'it cannot be read'}",
                           f"check it with `costing check {path}`", path)
    if run.input_sha256 and sha and sha != run.input_sha256:
        raise CompareError(f"{name} is not the input {run.file_name} was costed from (its SHA-256 "
                           f"{sha[:12]}... differs from {run.input_sha256[:12]}... on {run.file_name}'s "
                           "Run sheet)", f"give the input workbook "
                           f"{run.input_name or 'named on the Run sheet'} as it was when costed, or cost "
                           "it again", path)
    return model


def _addon(args) -> int:
    from costing.addon.build import build, python_version_note

    if not args.output.lower().endswith(".oxt"):
        raise UsageError(f"PATH must end in .oxt: {args.output}")
    if os.path.exists(args.output) and not args.overwrite:
        raise UsageError(f"{args.output} exists; add --overwrite to replace it, or choose another name")
    setting = build(args.output, args.python_path)
    print(f"extension written: {args.output} (finds costing in: {setting or 'LibreOffice Python only'}; "
          f"built with Python {python_version_note()}, LibreOffice's must match). "
          f"Install (or update): unopkg add --force {args.output}")
    return EXIT_OK


def _demo(args) -> int:
    from costing.example import write_example

    output = args.output
    if output is None:
        output = "costing-demo.xlsx"
        k = 2
        while os.path.exists(output):
            output = f"costing-demo-{k}.xlsx"
            k += 1
    with tempfile.TemporaryDirectory() as tmp:
        example = os.path.join(tmp, "example-input.xlsx")
        write_example(example)
        if args.input_copy:
            _check_output_path(args.input_copy, None, args.overwrite)
            _atomic_write(args.input_copy, write_example)
        return _run(example, output, args, input_label="bundled example (costing.example)")


def _import_network_parser(sub) -> None:
    g = sub.add_parser("import-network", help="import a GMNS road network (node.csv, link.csv) into a "
                       "workbook",
                       description="Read GMNS node.csv and link.csv (units from config.csv beside them, or "
                       "the flags), add their nodes to Depots and links to Lanes of a copy of WORKBOOK, join "
                       "each depot to its nearest node, and write OUTPUT. WORKBOOK is never modified.")
    g.add_argument("nodes", metavar="NODE.csv")
    g.add_argument("links", metavar="LINK.csv")
    g.add_argument("-w", "--workbook", metavar="WORKBOOK", required=True, help="input workbook (.xlsx)")
    g.add_argument("-o", "--output", metavar="OUTPUT", required=True, help="workbook to write (.xlsx)")
    g.add_argument("--config", metavar="CONFIG.csv", default=None, help="GMNS config.csv (units, crs)")
    g.add_argument("--length-unit", default=None, help="unit of link length: km, m, mi, ft")
    g.add_argument("--speed-unit", default=None, help="unit of free_speed: kph, mph, m/s")
    g.add_argument("--compact", action="store_true",
                   help="write the nodes and links to a network file beside OUTPUT (OUTPUT's name with "
                   f"{NETWORK_SUFFIX}) that Settings network_file points to, instead of Depots and Lanes "
                   f"rows; automatic above {COMPACT_ABOVE:,} nodes or links")
    g.add_argument("--overwrite", action="store_true",
                   help="replace OUTPUT (and its network file) if it exists")
    g.add_argument("--quiet", action="store_true", help="print only errors")


NETWORK_SUFFIX = ".network.npz"  # costing.network.netfile.SUFFIX
COMPACT_ABOVE = 100_000  # nodes or links: more go to a network file, not to spreadsheet rows


def network_file_for(output: str) -> str:
    """The network file written beside workbook `output`: ``week.xlsx`` -> ``week.network.npz``."""
    return os.path.splitext(output)[0] + NETWORK_SUFFIX


def _import_network(args) -> int:
    from costing import pipeline
    from costing.errors import InputError
    from costing.network.gmns import IMPORT_PREFIX, read_gmns, snap
    from costing.workbook.network_sheets import write_network

    if not os.path.exists(args.workbook):
        raise UsageError(f"input file not found: {args.workbook}")
    _check_output_path(args.output, args.workbook, args.overwrite)
    try:
        net = read_gmns(args.nodes, args.links, args.config, length_unit=args.length_unit,
                        speed_unit=args.speed_unit)
        # the workbook's own depots (an earlier import's network file is not read: it is replaced)
        model, problems, _ = pipeline.load(args.workbook, network=False)
        if model is None:
            raise InputError(problems)
        own = [d for d in model.depots if not d.depot_id.startswith(IMPORT_PREFIX)]
        snaps, connectors = snap(own, net)
        lanes = list(net.lanes) + connectors
        compact = args.compact or max(len(net.depots), len(lanes)) > COMPACT_ABOVE
        side = network_file_for(args.output) if compact else None
        if side is not None:
            _write_with_network_file(args, side, list(net.depots), lanes)
        else:
            _atomic_write(args.output, lambda p: write_network(args.workbook, p, list(net.depots), lanes,
                                                               (IMPORT_PREFIX,)))
    except InputError as e:
        _print_problems(e.problems, full_list="fix these and run the import again")
        print("costing: nothing written", file=sys.stderr)
        return EXIT_INPUT
    if not args.quiet:
        for s in snaps:
            print(f"depot {s.depot_id} joined to node {s.node_depot_id}: {s.km * 1000:,.1f} m "
                  f"(lane {s.lane_id})")
            if s.km > 1.0:
                print(f"warning: depot {s.depot_id} is {s.km:,.1f} km from the nearest node: the network "
                      "may not cover it (check its coordinates or import a larger network)", file=sys.stderr)
        closed = sum(not ln.open for ln in net.lanes)
        one_way = sum(not ln.two_way for ln in net.lanes)
        where = f"{args.output} and its network file {side}" if side else args.output
        print(f"{len(net.depots)} nodes, {len(net.lanes)} links ({one_way} one-way, {closed} closed), "
              f"{len(snaps)} depot(s) joined; wrote {where}")
    return EXIT_OK


def _write_with_network_file(args, side: str, depots, lanes) -> None:
    """The network file `side` and the workbook pointing to it (Settings network_file, its name
    relative to OUTPUT's folder), each written to a part file first: neither is left half
    written, and the workbook is renamed into place after the network file is complete."""
    from costing.network.gmns import IMPORT_PREFIX
    from costing.network.netfile import write_network_file
    from costing.workbook.network_sheets import write_network

    if os.path.exists(side) and not args.overwrite:
        raise UsageError(f"{side} exists; add --overwrite to replace it, or choose another OUTPUT name")
    folder = os.path.dirname(os.path.abspath(side))
    with _stop_signals_unwind():
        fd, tmp = tempfile.mkstemp(prefix=".costing-", suffix=".npz.part", dir=folder)
        os.close(fd)
        try:
            write_network_file(tmp, depots, lanes)
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
            name = os.path.basename(side)

            def write(p: str) -> None:
                write_network(args.workbook, p, [], [], (IMPORT_PREFIX,), name)

            _atomic_write_here(args.output, write, folder)
            os.replace(tmp, side)
        finally:
            if os.path.exists(tmp):
                os.unlink(tmp)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
