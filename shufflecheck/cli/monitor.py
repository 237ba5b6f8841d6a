"""``shufflecheck monitor``: continuous monitoring of tables and machines through a store.

``monitor ingest STORE LOG`` adds a log's new decks to their tables (one transaction;
re-ingesting adds nothing); ``monitor status STORE`` prints every table's evidence and
alarms; ``monitor dashboard STORE --report DIR`` writes the fleet dashboard (HTML and JSON).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from shufflecheck.cli._app import (
    JsonOption,
    SchedulerOption,
    WorkersOption,
    command_group,
    echo,
    emit_json,
    progress,
    warn,
)
from shufflecheck.cli.audit import Engine
from shufflecheck.common.numbers import percent

monitor = command_group(
    "monitor",
    "Continuous monitoring: ingest logs into a store, anytime-valid evidence and change "
    "alarms per table, a fleet dashboard.",
)

StoreArgument = Annotated[
    Path, typer.Argument(help="Monitoring store (one SQLite file; created on first ingest).")
]


@monitor.command()
def ingest(
    store: StoreArgument,
    logs: Annotated[list[Path], typer.Argument(help="Log file(s), ingested in the order given.")],
    table: Annotated[
        str | None, typer.Option(help="Table or machine every deck belongs to.")
    ] = None,
    by: Annotated[
        str | None,
        typer.Option(help="Column naming each deck's table (default: 'table' if present)."),
    ] = None,
    time: Annotated[str, typer.Option(help="Column with each deck's time.")] = "recorded_at",
    deck: Annotated[
        Path | None, typer.Option("--deck", metavar="<deck>", help="Deck definition TOML.")
    ] = None,
    alpha: Annotated[
        float | None,
        typer.Option(help="New tables: chance of ever a false evidence alarm (default 0.01)."),
    ] = None,
    arl: Annotated[
        float | None,
        typer.Option(help="New tables: mean decks to a false change alarm (default 20000)."),
    ] = None,
    confidence: Annotated[
        float | None, typer.Option(help="New tables: level of the change-point set (0.95).")
    ] = None,
    engine: Annotated[
        Engine,
        typer.Option(
            help="auto (default: Dask for several files of 64 MB or more when installed, else "
            "one process), single, or dask (files read and tables tested in parallel; this "
            "process alone writes the store)."
        ),
    ] = Engine.auto,
    scheduler: SchedulerOption = None,
    workers: WorkersOption = None,
    json_out: JsonOption = False,
) -> None:
    """Add the new decks of logs to their tables; each file is one transaction.

    A file ingested before (same SHA-256) adds nothing; decks the store already holds (same
    time, same order) are skipped. Logs are only read, never changed. Exit code 0 whether or
    not an alarm is raised; 2 for bad input (the files before the bad one stay ingested,
    the bad one adds nothing).
    """
    from shufflecheck.analyses.audit_log import choose_engine
    from shufflecheck.analyses.monitor import ingest_log, ingest_logs
    from shufflecheck.stats.monitoring import MonitorPlan

    plan = None
    if alpha is not None or arl is not None or confidence is not None:
        base = MonitorPlan()
        plan = MonitorPlan(
            alpha=base.alpha if alpha is None else alpha,
            arl=base.arl if arl is None else arl,
            confidence=base.confidence if confidence is None else confidence,
        )
    chosen = choose_engine(logs, engine.value, scheduler)
    options = dict(table=table, by=by, time=time, deck=deck, plan=plan)
    results = []
    where = "single process"
    if chosen == "dask":
        total = sum(log.stat().st_size for log in logs if log.is_file())
        with progress(total, f"ingesting {len(logs)} logs on dask") as update:
            fleet = ingest_logs(
                store,
                logs,
                engine="dask",
                scheduler=scheduler,
                workers=workers,
                progress=update,
                **options,
            )
        results, where = list(fleet.files), fleet.engine
    for log in logs if chosen != "dask" else ():
        with progress(0, f"ingesting {log.name}") as update:
            results.append(ingest_log(store, log, progress=update, **options))
    if json_out:
        emit_json([r.as_json() for r in results])
        return
    for r in results:
        if r.already is not None:
            echo(f"{r.path}: already ingested on {r.already['at']}; nothing added")
            continue
        for t in r.tables:
            known = f", {t.decks_known:,} already stored" if t.decks_known else ""
            echo(
                f"{r.path}: {t.table}: {t.decks_added:,} deck{'' if t.decks_added == 1 else 's'}"
                f" added (rows {t.first_row:,}-{t.last_row:,}{known}); {t.decks_tested:,} tested "
                "in all"
            )
            if t.family_alarm is not None:
                deck_no = t.family_alarm["deck"]
                warn(f"ALARM {t.table}: evidence reached its alarm level at deck {deck_no:,}")
            if t.change_alarm is not None:
                warn(
                    f"ALARM {t.table}: change detected at deck {t.change_alarm['deck']:,} "
                    f"({t.change_alarm['statistic']})"
                )
    if chosen == "dask":
        echo(f"Read and tested on {where}; the store was written by this process.")


@monitor.command()
def status(store: StoreArgument, json_out: JsonOption = False) -> None:
    """Every table of a store: evidence in plain words, alarms, the change-point set."""
    from shufflecheck.analyses.monitor import fleet_status

    payload = fleet_status(store).as_json()
    if json_out:
        emit_json(payload)
        return
    for t in payload["tables"]:
        ev, ch = t["evidence"], t["change"]
        echo(f"{t['table']}: {t['decks']:,} decks, last recorded {t['last_deck_time']}")
        echo(f"  evidence: {ev['words']}")
        if ch["alarm"] is None:
            echo(
                f"  change: no alarm (largest CUSUM {ch['cusum_now']:.3g}, alarm level "
                f"{ch['cusum_alarm_level']:.3g}; mean decks to a false alarm >= "
                f"{ch['arl_lower_bound']:,.0f})"
            )
        else:
            found = ch["set_now"]
            rows = ch["set_rows"]
            echo(
                f"  change: ALARM at deck {ch['alarm']['deck']:,} ({ch['alarm']['statistic']}); "
                f"the departure began between deck {found['low']:,} and {found['high']:,} "
                f"(recorded {rows['low']['time']} to {rows['high']['time']}; "
                f"{percent(found['confidence'])} under the alarming alternative)"
            )
        retro = t["retrospective"]
        if retro is not None and retro["since_when"] is not None:
            echo(
                f"  retrospective audit (one look): since-when estimate deck "
                f"{retro['since_when']['deck']:,}"
            )
    echo(payload["caution"])


@monitor.command()
def dashboard(
    store: StoreArgument,
    out: Annotated[
        Path,
        typer.Option(
            "--report",
            metavar="<folder>",
            help="Folder for the dashboard: dashboard.html and dashboard.json.",
        ),
    ],
    force: Annotated[
        bool,
        typer.Option(
            "--force",
            show_default=False,
            help="Replace an existing dashboard.html and dashboard.json.",
        ),
    ] = False,
    json_out: JsonOption = False,
) -> None:
    """Write the fleet dashboard: one self-contained HTML page and the same as JSON."""
    from shufflecheck.analyses.monitor import fleet_status
    from shufflecheck.cli._app import to_json
    from shufflecheck.common.errors import InputError
    from shufflecheck.common.files import atomic_write, check_output, write_failure
    from shufflecheck.report.dashboard import dashboard_html

    if out.exists() and not out.is_dir():
        raise InputError(f"cannot write {out}: it is a file, not a folder")
    if not out.exists():
        if not out.parent.exists():
            raise InputError(f"cannot write {out}: folder {out.parent} does not exist")
        try:
            out.mkdir()
        except OSError as exc:
            raise write_failure(out, exc) from None
    files = (out / "dashboard.json", out / "dashboard.html")
    for path in files:
        check_output(path, force=force, inputs={store: "the store itself"})
    payload = fleet_status(store).as_json()
    atomic_write(files[0], to_json(payload) + "\n", force=force)
    atomic_write(files[1], dashboard_html(payload), force=force)
    if json_out:
        emit_json(payload)
        return
    echo(f"Wrote {out / 'dashboard.html'} and {out / 'dashboard.json'}")
