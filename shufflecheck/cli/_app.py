"""The typer application, its error handling and output helpers shared by all commands.

Commands live in one small module each (``shufflecheck/cli/<command>.py``) and only call
the library: no mathematics lives in the CLI. Bad input raised anywhere as
:class:`shufflecheck.common.errors.InputError` becomes one line on stderr and exit code 2.

The last line of defence: any other exception (a bug, or memory exhausted despite the
checks) prints ``error: internal error: <one line>`` and the path of a file holding the
traceback, and exits with code 3; a raw traceback is never shown. SIGTERM and SIGHUP end
a command like an error (exit 143 / 129) so that temporary files are removed on the way
out. Warnings raised while a command runs are held back and printed as ``warning: ...``
lines after it succeeds (never in front of an ``error:`` line).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import json
import math
import os
import re
import signal
import sys
import tempfile
import threading
import traceback
import warnings
from collections.abc import Callable, Iterator
from fractions import Fraction
from pathlib import Path
from typing import Annotated, Any

import typer
from typer.core import TyperCommand, TyperGroup

from shufflecheck.common.errors import EXIT_BAD_INPUT, InputError, clip

#: the command-line parser's usage error (typer ships its own copy of click)
_UsageError = typer.BadParameter.__mro__[1]
#: exceptions the command-line framework handles itself (exit codes, --help, aborts)
_FRAMEWORK = (typer.Exit, typer.Abort, typer.exceptions.TyperException)

#: options renamed for one vocabulary (docs/options.md): command -> old name -> (new
#: name, what it means); the old name gives a one-line error naming the new one
RENAMED: dict[str, dict[str, tuple[str, str]]] = {
    "assess": {"--decks": ("--simulate", "simulated decks")},
    "demo": {"--out": ("--report", "the report folder")},
    "monitor dashboard": {"--out": ("--report", "the dashboard's folder")},
    "simulate": {"--start": ("--start-time", "the time of the first deck")},
    "track": {"--shoes": ("--simulate", "simulated shoes")},
}

#: library arguments a command names by an option of another name: command -> argument
#: -> option (the option of the same name is found without this table)
ARGUMENT_OPTIONS: dict[str, dict[str, str]] = {
    "assess": {"decks": "--simulate", "repeats": "--repeat"},
    "simulate": {"repeats": "--repeat", "start": "--start-time"},
    "track": {"shoes": "--simulate"},
    "power": {"repeats": "--repeat"},
}

#: exit code of an unexpected failure (a bug): distinct from bad input (2)
EXIT_INTERNAL = 3


class _Terminated(BaseException):
    """Raised in the main thread by SIGTERM / SIGHUP, so clean-up code runs."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


@contextlib.contextmanager
def _signals_as_exceptions() -> Iterator[None]:
    """While a command runs, SIGTERM and SIGHUP raise :class:`_Terminated` (main thread)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def handler(signum: int, frame: Any) -> None:
        raise _Terminated(signum)

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        number = getattr(signal, name, None)
        if number is not None:
            with contextlib.suppress(ValueError, OSError):
                previous[number] = signal.signal(number, handler)
    try:
        yield
    finally:
        for number, old in previous.items():
            with contextlib.suppress(ValueError, OSError, TypeError):
                signal.signal(number, old)


def _save_traceback(exc: BaseException) -> str:
    """Write the traceback of ``exc`` to a private file in the temporary folder; its path."""
    from shufflecheck.common.version import __version__

    stamp = dt.datetime.now().strftime("%Y%m%d-%H%M%S")
    fd, name = tempfile.mkstemp(prefix=f"shufflecheck-traceback-{stamp}-", suffix=".txt")
    with os.fdopen(fd, "w", encoding="utf-8", errors="backslashreplace") as handle:
        handle.write(f"shufflecheck {__version__}, Python {sys.version.split()[0]}\n")
        handle.write("command: " + " ".join(sys.argv) + "\n\n")
        handle.write("".join(traceback.format_exception(type(exc), exc, exc.__traceback__)))
    return name


def internal_error_line(exc: BaseException) -> str:
    """``error: internal error: ...`` for an unexpected exception, with its traceback file."""
    if isinstance(exc, MemoryError):
        what = "out of memory (MemoryError); try a smaller input or fewer decks"
    else:
        text = " ".join(str(exc).split())
        what = f"{type(exc).__name__}: {text}" if text else type(exc).__name__
    try:
        where = f"traceback in {_save_traceback(exc)}"
    except Exception as failure:  # the file cannot be written: say so, still one line
        where = f"the traceback could not be saved ({type(failure).__name__})"
    return f"error: internal error: {clip(what, 300)} ({where}; please report it)"


def quiet_stdout() -> None:
    """Point standard output at the null device: its reader has gone (``| head``), so
    nothing more can be shown, and flushing at exit must not fail."""
    with contextlib.suppress(OSError, ValueError, AttributeError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)


def _renamed(command: str, args: list[str]) -> None:
    """An :class:`InputError` for an option given under its old name (see RENAMED);
    ``command`` is the command path without the program (``monitor dashboard``)."""
    table = RENAMED.get(command, {})
    for arg in args:
        if arg == "--":
            return
        name = arg.split("=", 1)[0]
        if name in table:
            new, meaning = table[name]
            raise InputError(f"{command} {name} is now {new} ({meaning})")


def plain_help(text: str) -> str:
    """Help text without the parser's Python spellings: ``<str>`` reads ``<text>`` and an
    argument's ``{procedure}`` in the usage line reads ``PROCEDURE``."""
    text = re.sub(r"<str>( {2,})", lambda m: "<text>" + m.group(1)[1:], text)  # same width
    text = text.replace("<str>", "<text>")
    return re.sub(r"\{([a-z_]+)\}", lambda m: m.group(1).upper(), text)


class HelpCommand(TyperCommand):
    """A command whose ``--help`` is passed through :func:`plain_help`."""

    def format_help(self, ctx: Any, formatter: Any) -> None:
        super().format_help(ctx, formatter)
        formatter.buffer[:] = [plain_help("".join(formatter.buffer))]


def use_plain_help(group: typer.Typer) -> None:
    """Give every command of ``group`` (and of its sub-groups) :class:`HelpCommand`."""
    for info in group.registered_commands:
        if info.cls in (None, TyperCommand):
            info.cls = HelpCommand
    for sub in group.registered_groups:
        if sub.typer_instance is not None:
            use_plain_help(sub.typer_instance)


class _Group(TyperGroup):
    """Turns :class:`InputError` from any command, and the parser's usage errors, into one
    line ``error: ...`` on stderr and exit code 2; anything unexpected into one line
    ``error: internal error: ...`` and exit code 3 (see the module notes). A closed
    standard output (``shufflecheck mix riffle | head -1``) is a normal end: exit code 0,
    no message."""

    def resolve_command(self, ctx: Any, args: list[str]) -> Any:
        name, command, rest = super().resolve_command(ctx, args)
        path = [name or ""]
        outer = ctx
        while outer.parent is not None:  # the group's own name, below the program
            path.insert(0, outer.info_name or "")
            outer = outer.parent
        _renamed(" ".join(path), list(rest))
        return name, command, rest

    def invoke(self, ctx: Any) -> Any:
        with warnings.catch_warnings(record=True) as caught, _signals_as_exceptions():
            try:
                result = super().invoke(ctx)
            except InputError as exc:
                typer.echo(f"error: {option_message(exc, self._subcommand(ctx))}", err=True)
                raise typer.Exit(code=EXIT_BAD_INPUT) from None
            except _UsageError as exc:
                where = exc.ctx.command_path if getattr(exc, "ctx", None) else "shufflecheck"
                message = clip(" ".join(exc.format_message().split()), 1000)
                typer.echo(f"error: {message} (see '{where} --help')", err=True)
                raise typer.Exit(code=EXIT_BAD_INPUT) from None
            except BrokenPipeError:
                quiet_stdout()
                raise typer.Exit(code=0) from None
            except _Terminated as exc:
                name = signal.Signals(exc.signum).name
                typer.echo(f"error: stopped by {name}; no partial output was left", err=True)
                raise typer.Exit(code=128 + exc.signum) from None
            except _FRAMEWORK:
                raise
            except Exception as exc:
                typer.echo(internal_error_line(exc), err=True)
                raise typer.Exit(code=EXIT_INTERNAL) from None
        for item in caught:
            text = " ".join(str(item.message).split())
            typer.echo(f"warning: {clip(text, 300)}", err=True)
        return result

    def _subcommand(self, ctx: Any) -> Any:
        pending = getattr(ctx, "_protected_args", None) or list(getattr(ctx, "args", ()) or ())
        name = ctx.invoked_subcommand or (pending or [None])[0]
        return self.get_command(ctx, name) if name else None


def _words(name: str) -> set[str]:
    base = name.replace("-", "_").strip("_")
    return {base, base.rstrip("s"), base + "s"}


def option_message(exc: InputError, command: Any) -> str:
    """The message of ``exc`` with each library argument it names (``cards``) written as
    the command's option (``--cards``), when the command has an option for it (or the
    option :data:`ARGUMENT_OPTIONS` names for it)."""
    options: dict[str, str] = {}
    declared = ARGUMENT_OPTIONS.get(getattr(command, "name", None) or "", {})
    for argument in exc.arguments if command is not None else ():
        if argument in declared:
            options[argument] = declared[argument]
            continue
        wanted = _words(argument)
        exact = argument.replace("-", "_").strip("_")
        candidates = []
        for param in getattr(command, "params", ()):
            opts = [o for o in getattr(param, "opts", ()) if o.startswith("--")]
            names = {param.name or ""} | {o.lstrip("-") for o in opts}
            if opts and any(_words(n) & wanted for n in names):
                # an option of exactly the argument's name wins over a singular or plural
                same = any(n.replace("-", "_").strip("_") == exact for n in names)
                candidates.append((not same, opts[0]))
        if candidates:
            options[argument] = min(candidates, key=lambda c: c[0])[1]
    return exc.naming(options)


app = typer.Typer(
    cls=_Group,
    name="shufflecheck",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


def command_group(name: str, help: str) -> typer.Typer:
    """A group of sub-commands (``shufflecheck NAME SUB ...``) with the same error handling
    as the top level, registered on :data:`app`."""
    group = typer.Typer(
        cls=_Group,
        name=name,
        help=help,
        no_args_is_help=True,
        add_completion=False,
        pretty_exceptions_enable=False,
        rich_markup_mode=None,
    )
    app.add_typer(group, name=name)
    return group


def _version(value: bool) -> None:
    if value:
        from shufflecheck.common.version import __version__

        typer.echo(f"shufflecheck {__version__}")
        raise typer.Exit()


@app.callback()
def _main(
    version: Annotated[
        bool,
        typer.Option(
            "--version",
            is_eager=True,
            callback=_version,
            show_default=False,
            help="Print the version and exit.",
        ),
    ] = False,
) -> None:
    """Audit card shuffling with the mathematics of the symmetric group: exact distances to
    random, policy minimums, and tests on recorded deck orders. Every number is labelled
    exact, bound, estimate or conjectured (resting on an unproven statement, never used to
    certify). Results are statistical evidence, not certification: approval of shuffling
    devices and dealing rules belongs to the local gaming regulator and accredited test
    laboratories."""


def _check_seed(value: int | None) -> int | None:
    if value is not None and value < 0:
        raise InputError(f"seed must be an integer, 0 or more, got {value}", argument="seed")
    return value


def seed_option(
    default_help: str = "Random seed, 0 or more (results are reproducible from it).",
) -> Any:
    """The ``--seed <int>`` option (checked here, so the help shows no range syntax)."""
    return typer.Option("--seed", metavar="<int>", callback=_check_seed, help=default_help)


#: ``--seed <int>``: every random result is reproducible from it
SeedOption = Annotated[int, seed_option()]

#: ``--report FOLDER``, shared by every command that writes a report
ReportOption = Annotated[
    Path | None,
    typer.Option(
        "--report",
        metavar="<folder>",
        help="Write a report folder here: report.md, report.html, report.json, figures/.",
    ),
]
#: ``--force``: a flag (no ``--no-force`` twin)
ForceOption = Annotated[
    bool,
    typer.Option(
        "--force",
        show_default=False,
        help="Replace existing output files and report folders (never the command's inputs).",
    ),
]
#: ``--json``: the result as JSON on stdout
JsonOption = Annotated[
    bool, typer.Option("--json", show_default=False, help="Machine-readable output.")
]

SchedulerOption = Annotated[
    str | None,
    typer.Option(help="Address of an existing Dask scheduler, e.g. tcp://10.0.0.5:8786."),
]

WorkersOption = Annotated[
    int | None, typer.Option(help="Workers of the local Dask cluster (default: one per core).")
]


def plot_option(what: str) -> Any:
    """The ``--plot <file>`` option: ``what`` says what the figure shows."""
    return typer.Option(
        "--plot",
        metavar="<file>",
        help=f"Draw {what} to this PNG file (refused if it exists, unless --force).",
    )


def repeat_counts(text: str, *, key: str = "repeats", ranges: bool = True) -> list[int]:
    """The repetition counts of ``--repeat``: ``"5"`` -> [5]; ``"4-8"`` (or ``4..8``) ->
    [4, ..., 8]; each count inside the limit ``key``. With ``ranges=False`` only one count
    is allowed. Errors are one line naming ``--repeat``."""
    from shufflecheck.common.limits import limit

    cleaned = text.replace("..", "-").replace(" ", "")
    try:
        if "-" in cleaned[1:]:
            low_text, high_text = cleaned.split("-", 1) if cleaned[0] != "-" else ("", "")
            low, high = int(low_text), int(high_text)
        else:
            low = high = int(cleaned)
    except ValueError:
        shape = "a count like 5 or a range like 4-8" if ranges else "one count like 5"
        raise InputError(
            f"repeat must be {shape}, got {clip(text, 40)!r}", argument="repeat"
        ) from None
    if not ranges and low != high:
        raise InputError(
            f"repeat takes one count R here (each deck is shuffled exactly R times), got "
            f"{clip(text, 40)!r}",
            argument="repeat",
        )
    allowed = limit(key)
    if low == high and "-" not in cleaned[1:]:
        allowed.check(low, name="repeat")
    elif not allowed.low <= low <= high <= allowed.high:
        why = f" ({allowed.why})" if high > allowed.high else ""
        raise InputError(
            f"repeat must lie within {allowed.low}..{allowed.high} with low <= high, got "
            f"{clip(text, 40)!r}{why}",
            argument="repeat",
        )
    return list(range(low, high + 1))


def _json_default(value: Any) -> Any:
    if isinstance(value, Fraction):
        return float(value)
    if hasattr(value, "item"):  # numpy scalars
        return value.item()
    if hasattr(value, "tolist"):  # numpy arrays
        return value.tolist()
    if isinstance(value, (set, frozenset, tuple)):
        return list(value)
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def _clean(value: Any) -> Any:
    """Replace non-finite floats (not valid JSON) by strings and Fractions by floats."""
    if isinstance(value, float) and not math.isfinite(value):
        return "inf" if value > 0 else ("-inf" if value < 0 else "nan")
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def to_json(payload: Any) -> str:
    """Serialise a result for ``--json`` (strict JSON: no NaN or Infinity literals).

    One pass when the payload is already strict JSON; only payloads holding non-finite
    floats or non-string keys take the slower cleaning round trip (same output either way).
    """
    try:
        return json.dumps(payload, default=_json_default, allow_nan=False, indent=2)
    except (ValueError, TypeError):
        pass
    return json.dumps(_clean(json.loads(json.dumps(payload, default=_json_default))), indent=2)


def emit_json(payload: Any) -> None:
    """Print a result as JSON on stdout."""
    sys.stdout.write(to_json(payload) + "\n")


def echo(text: str = "") -> None:
    """Human-readable output on stdout, each line wrapped to 100 columns
    (:func:`~shufflecheck.report.render.terminal.wrap_line`; tables come already fitted)."""
    from shufflecheck.report.render.terminal import wrap_line

    typer.echo("\n".join(wrap_line(line) for line in str(text).split("\n")))


def estimate_cell(found: Any) -> str:
    """A Monte Carlo estimate and its interval in a terminal table cell, three digits each
    (the interval's own width): ``0.158 (0.146 to 0.169)``, the ends rounded outward."""
    from shufflecheck.common.numbers import format_number

    low, high = found.interval
    return (
        f"{format_number(found.value, 3)} ({format_number(low, 3, 'down')} to "
        f"{format_number(high, 3, 'up')})"
    )


def warn(text: str) -> None:
    """A notice on stderr (never mixed into ``--json`` output)."""
    typer.echo(text, err=True)


@contextlib.contextmanager
def progress(
    total: int, label: str, size: str | None = None, *, after: float = 0.0
) -> Iterator[Callable[[int], None]]:
    """A progress bar on stderr for long work (shown only when stderr is a terminal).

    ``size`` states the expected size of the work; it is printed before the bar starts.
    Yields ``update(done)`` taking the number of units finished so far. With ``after``
    (seconds), the bar (and the size line) appear only once the work has run that long,
    so quick runs of work that can be long print nothing.
    """
    if total <= 0 or not sys.stderr.isatty():
        yield lambda done: None
        return
    import time

    start = time.monotonic()
    with contextlib.ExitStack() as stack:
        state: dict[str, Any] = {"done": 0, "bar": None}

        def open_bar() -> Any:
            if size:
                typer.echo(f"{label}: {size}", err=True)
            bar = stack.enter_context(typer.progressbar(length=total, label=label, file=sys.stderr))
            state["bar"] = bar
            return bar

        if after <= 0:
            open_bar()

        def update(done: int) -> None:
            bar = state["bar"]
            if bar is None:
                if time.monotonic() - start < after:
                    return
                bar = open_bar()
            bar.update(done - state["done"])
            state["done"] = done

        yield update


@contextlib.contextmanager
def report_progress(figures: int, label: str) -> Iterator[Callable[[], None]]:
    """A progress bar over building and saving a report: one unit per figure drawn (they
    are most of the work), one for writing the files. Yields ``saved()``, to call once the
    report is written."""
    from shufflecheck.report.figures import figure_progress

    with progress(figures + 1, label) as update:
        drawn = [0]

        def one_more() -> None:
            drawn[0] += 1
            update(min(drawn[0], figures))

        with figure_progress(one_more):
            yield lambda: update(figures + 1)


def check_outputs(
    *,
    force: bool,
    inputs: dict[Any, str] | tuple[Any, ...] | list[Any] = (),
    files: tuple[Any, ...] | list[Any] = (),
    folders: tuple[Any, ...] | list[Any] = (),
    sizes: dict[Any, int] | None = None,
) -> None:
    """Refuse bad output paths before any work is done (the writers check again).

    ``files`` and ``folders`` are output paths (None entries are ignored): each must not be
    one of ``inputs`` (paths, or path -> what it is, e.g. ``"the log itself"``), must not
    exist unless ``force``, and its folder must be writable; ``sizes`` maps an output to
    the bytes it will need on disk, when known.
    """
    from shufflecheck.common.files import check_output

    if isinstance(inputs, dict):
        sources: dict[Path, str] = {Path(p): w for p, w in inputs.items() if p is not None}
    else:
        sources = {Path(p): "one of the files this command reads" for p in inputs if p is not None}
    for path in files:
        if path is not None:
            size = (sizes or {}).get(path)
            check_output(path, force=force, inputs=sources, size=size)
    for path in folders:
        if path is not None:
            check_output(path, force=force, inputs=sources, folder=True)
            from shufflecheck.report.writer import check_report_target

            check_report_target(path, force=force)


def check_report_folder(
    folder: Path | None, *, force: bool, inputs: Any = (), owner: str | None = None
) -> None:
    """Refuse an unusable report folder before any work is done (the writer checks again);
    a folder ``owner`` wrote may be replaced without ``force``."""
    if folder is not None and owner is not None:
        from shufflecheck.report.writer import owned_by

        if folder.is_dir() and not force and not owned_by(folder, owner):
            raise InputError(
                f"report folder {folder} exists and was not written by the {owner}; pass "
                "force to replace it",
                argument="force",
            )
        force = force or owned_by(folder, owner)
    check_outputs(force=force, inputs=tuple(inputs), folders=(folder,))


def procedure_inputs(*arguments: str | None) -> dict[Path, str]:
    """The files among procedure arguments (text that names a ``.toml`` file)."""
    return {
        Path(a): "the procedure file itself"
        for a in arguments
        if a is not None and a.lower().endswith(".toml")
    }


def save_report(document: Any, folder: Any, *, force: bool, owner: str | None = None) -> str:
    """Write a report folder (atomically; refuses to replace without ``force``, unless
    ``owner`` wrote it: see :mod:`shufflecheck.report.writer`)."""
    from shufflecheck.report.writer import write_report

    written = write_report(document, folder, force=force, owner=owner)
    return str(written.folder)
