"""The fleet dashboard: one self-contained HTML page (and the same content as JSON) for every
monitored table.

The page is rendered from the JSON payload of
:meth:`shufflecheck.analyses.monitor.FleetStatus.as_json`, so the two never disagree. It
needs nothing from outside: no scripts at all, an inline stylesheet, charts as inline SVG,
and a Content-Security-Policy that forbids every other source (a browser test checks that
nothing is requested). Each table gets a summary row (last ingest, evidence, alarms, the
change-point set) and a timeline: the family evidence (log10 e-value) with its alarm level,
and the largest CUSUM of the change detectors with its alarm level, the change-point set
shaded and the retrospective audit's "since when" estimate marked.
"""

from __future__ import annotations

import math
from html import escape
from pathlib import Path
from typing import Any

from shufflecheck.common.numbers import p_relation, percent
from shufflecheck.common.sources import (
    HOWARD_RAMDAS_MCAULIFFE_SEKHON,
    PAGE,
    SHAFER_VOVK,
    SHIN_RAMDAS_RINALDO,
    VILLE,
    WAUDBY_SMITH_RAMDAS,
)

#: Methods behind the page, listed at its foot.
SOURCES = (
    SHAFER_VOVK,
    VILLE,
    WAUDBY_SMITH_RAMDAS,
    HOWARD_RAMDAS_MCAULIFFE_SEKHON,
    PAGE,
    SHIN_RAMDAS_RINALDO,
)

__all__ = ["CSP", "SOURCES", "dashboard_html", "timeline_svg"]

#: The page may load nothing: inline styles only, no scripts, no images from anywhere.
CSP = (
    "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; "
    "form-action 'none'"
)

_STYLE = """
:root { --ink:#1b1f24; --muted:#5b6168; --rule:#c8ccd0; --paper:#fcfcfa; --panel:#eef2f5;
  --evidence:#0072b2; --detector:#6a3d9a; --alarm:#c0392b; --set:#f0b429; --ok:#2e7d32;
  --sans:"Segoe UI","Helvetica Neue",Helvetica,Arial,"Liberation Sans",sans-serif; }
* { box-sizing:border-box; }
body { margin:0; background:var(--paper); color:var(--ink); font:0.95rem/1.5 var(--sans); }
main { max-width:72rem; margin:0 auto; padding:1.6rem 1.2rem 3rem; }
h1 { font-size:1.6rem; margin:0 0 0.2rem; }
h2 { font-size:1.2rem; margin:2rem 0 0.4rem; border-bottom:2px solid var(--ink); }
.meta, .note { color:var(--muted); font-size:0.85rem; }
table { border-collapse:collapse; width:100%; margin:0.8rem 0; font-size:0.85rem; }
th, td { border-bottom:1px solid var(--rule); padding:0.35rem 0.5rem; text-align:left;
  vertical-align:top; }
th { background:var(--panel); }
td:first-child { white-space:nowrap; }
.state { font-weight:700; white-space:nowrap; }
.state.alarm { color:var(--alarm); }
.state.quiet { color:var(--ok); }
.card { border:1px solid var(--rule); background:#fff; padding:0.8rem 1rem; margin:1rem 0; }
.card.alarm { border-left:0.4rem solid var(--alarm); }
.card.quiet { border-left:0.4rem solid var(--ok); }
.facts { display:grid; grid-template-columns:max-content 1fr; gap:0.15rem 1rem; margin:0.4rem 0; }
.facts dt { color:var(--muted); }
.facts dd { margin:0; }
svg.timeline { width:100%; height:auto; display:block; margin-top:0.5rem; }
svg text { font-family:var(--sans); font-size:11px; fill:var(--ink); }
.caution { border-top:1px solid var(--rule); margin-top:2rem; padding-top:0.6rem; }
"""


def _num(value: float, digits: int = 3) -> str:
    if not math.isfinite(value):
        return "inf"
    if abs(value) >= 1000:
        return f"{value:,.0f}"
    return f"{value:.{digits}g}"


def _thousands(value: int) -> str:
    return f"{int(value):,}"


def _evidence_cell(t: dict[str, Any]) -> str:
    ev = t["evidence"]
    log10 = ev["log10_e_value"]
    shown = f"10^{log10:.1f}" if log10 > 6 else _num(10**log10)
    return f"{shown} (alarm at {_num(ev['alarm_level'])})"


def _change_text(t: dict[str, Any]) -> str:
    ch = t["change"]
    found = ch["set_now"]
    if ch["alarm"] is None or found is None:
        return "no change alarm"
    rows = ch.get("set_rows") or {}
    low, high = rows.get("low", {}), rows.get("high", {})
    text = (
        f"began between deck {_thousands(found['low'])} and {_thousands(found['high'])} "
        f"({percent(found['confidence'])} set under the alarming alternative)"
    )
    if low and high:
        where = (
            f"row {low['row']} of {Path(low['file']).name} to row {high['row']} of "
            f"{Path(high['file']).name}"
            if low["file"] != high["file"]
            else f"rows {low['row']}-{high['row']} of {Path(low['file']).name}"
        )
        text += f"; {where}, recorded {low['time']} to {high['time']}"
    return text


def _state(t: dict[str, Any]) -> tuple[str, str]:
    alarms = []
    if t["evidence"]["alarm"] is not None:
        alarms.append(f"evidence alarm at deck {_thousands(t['evidence']['alarm']['deck'])}")
    if t["change"]["alarm"] is not None:
        ch = t["change"]["alarm"]
        alarms.append(
            f"change alarm at deck {_thousands(ch['deck'])} ({escape(str(ch['statistic']))})"
        )
    if alarms:
        return "alarm", "; ".join(alarms)
    return "quiet", "no alarm"


def _ticks(low: float, high: float, count: int = 5) -> list[float]:
    span = max(high - low, 1e-9)
    raw = span / count
    step = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if raw <= m * step:
            step *= m
            break
    first = math.ceil(low / step) * step
    out = []
    v = first
    while v <= high + 1e-9:
        out.append(round(v, 10))
        v += step
    return out


def timeline_svg(t: dict[str, Any], *, width: int = 900, height: int = 330) -> str:
    """Inline SVG timeline of one table: family evidence and largest CUSUM against deck."""
    line = t["timeline"]
    decks = line["deck"]
    pad_l, pad_r, gap = 58, 16, 34
    head = 22  # room above each panel for its title, off the curves and the alarm line
    panel_h = (height - head - 20 - gap - 28) // 2
    x_max = max(decks[-1] if decks else 1, 1)
    x_min = 1

    def sx(d: float) -> float:
        return pad_l + (d - x_min) / max(x_max - x_min, 1) * (width - pad_l - pad_r)

    parts = [
        f'<svg class="timeline" viewBox="0 0 {width} {height}" role="img" '
        f'xmlns="http://www.w3.org/2000/svg" aria-label="timeline of {escape(t["table"])}">'
    ]
    ch = t["change"]
    found = ch["set_now"]
    panels = [
        (
            "log10 e-value (evidence)",
            line["log10_e"],
            math.log10(t["evidence"]["alarm_level"]),
            "#0072b2",
            "evidence",
        ),
        (
            "largest CUSUM (nats)",
            line["cusum"],
            ch["cusum_alarm_level"],
            "#6a3d9a",
            "detector",
        ),
    ]
    for k, (label, values, level, colour, kind) in enumerate(panels):
        top = head + k * (panel_h + gap)
        finite = [v for v in values if v is not None and math.isfinite(v)]
        y_lo = min([0.0, *finite, level])
        y_hi = max([level * 1.15, *finite])
        y_hi = y_hi if y_hi > y_lo else y_lo + 1

        def sy(v: float, top: int = top, y_lo: float = y_lo, y_hi: float = y_hi) -> float:
            return top + panel_h - (v - y_lo) / (y_hi - y_lo) * panel_h

        parts.append(
            f'<g class="panel {kind}"><rect x="{pad_l}" y="{top}" width="{width - pad_l - pad_r}" '
            f'height="{panel_h}" fill="#fff" stroke="#c8ccd0"/>'
        )
        if found is not None:
            x0, x1 = sx(found["low"]), sx(found["high"])
            parts.append(
                f'<rect class="change-set" x="{x0:.1f}" y="{top}" width="{max(x1 - x0, 1.5):.1f}" '
                f'height="{panel_h}" fill="#f0b429" fill-opacity="0.35"/>'
            )
        for v in _ticks(y_lo, y_hi, 4):
            y = sy(v)
            parts.append(
                f'<line x1="{pad_l - 4}" x2="{pad_l}" y1="{y:.1f}" y2="{y:.1f}" stroke="#555"/>'
                f'<text x="{pad_l - 7}" y="{y + 4:.1f}" text-anchor="end">{_num(v, 3)}</text>'
            )
        y = sy(level)
        parts.append(
            f'<line class="alarm-level" x1="{pad_l}" x2="{width - pad_r}" y1="{y:.1f}" '
            f'y2="{y:.1f}" stroke="#c0392b" stroke-dasharray="6 4"/>'
            f'<text x="{width - pad_r - 4}" y="{y - 4:.1f}" text-anchor="end" '
            f'fill="#c0392b">alarm level</text>'
        )
        if decks:
            points = " ".join(
                f"{sx(d):.1f},{sy(v):.1f}"
                for d, v in zip(decks, values, strict=True)
                if v is not None and math.isfinite(v)
            )
            parts.append(
                f'<polyline class="series" points="{points}" fill="none" stroke="{colour}" '
                f'stroke-width="1.6"/>'
            )
        alarm = t["evidence"]["alarm"] if kind == "evidence" else ch["alarm"]
        if alarm is not None:
            x = sx(alarm["deck"])
            parts.append(
                f'<line class="alarm-mark" x1="{x:.1f}" x2="{x:.1f}" y1="{top}" '
                f'y2="{top + panel_h}" stroke="#c0392b" stroke-width="2"/>'
            )
        retro = t.get("retrospective") or {}
        since = (retro.get("since_when") or {}).get("deck")
        if since is not None and kind == "detector":
            x = sx(since)
            parts.append(
                f'<line class="since-when" x1="{x:.1f}" x2="{x:.1f}" y1="{top}" '
                f'y2="{top + panel_h}" stroke="#333" stroke-dasharray="2 3"/>'
            )
        parts.append(
            f'<text x="{pad_l}" y="{top - 6}" font-weight="bold">{escape(label)}</text></g>'
        )
    base = head + 2 * panel_h + gap
    for v in _ticks(x_min, x_max, 8):
        x = sx(v)
        parts.append(
            f'<line x1="{x:.1f}" x2="{x:.1f}" y1="{base}" y2="{base + 4}" stroke="#555"/>'
            f'<text x="{x:.1f}" y="{base + 16}" text-anchor="middle">{_thousands(int(v))}</text>'
        )
    parts.append(
        f'<text x="{(pad_l + width - pad_r) / 2:.0f}" y="{height - 4}" text-anchor="middle">'
        "deck (in time order)</text></svg>"
    )
    return "".join(parts)


def _table_card(t: dict[str, Any]) -> str:
    state, words = _state(t)
    retro = t.get("retrospective")
    retro_text = "no decks"
    if retro is not None:
        verdict = "flags" if retro["flagged"] else "does not flag"
        retro_text = (
            f"{verdict} ({escape(retro['strongest'])}, adjusted p "
            f"{p_relation(retro['log10_p_adjusted'])})"
        )
        if retro["since_when"] is not None:
            retro_text += f"; since-when estimate deck {_thousands(retro['since_when']['deck'])}"
        retro_text += "; one look only"
    ch = t["change"]
    facts = [
        ("decks", f"{_thousands(t['decks'])} tested, from {t['files']} file(s)"),
        ("recorded", f"{t['first_deck_time']} to {t['last_deck_time']}"),
        ("last ingest", t["last_ingest"]),
        ("evidence", escape(t["evidence"]["words"])),
        (
            "change detector",
            f"largest CUSUM {_num(ch['cusum_now'])} ({escape(ch['leading_statistic'])}); "
            f"alarm level {_num(ch['cusum_alarm_level'])}, mean decks to a false alarm "
            f"&ge; {_thousands(int(ch['arl_lower_bound']))}",
        ),
        ("change point", escape(_change_text(t))),
        ("retrospective audit", retro_text),
    ]
    items = "".join(f"<dt>{k}</dt><dd>{v}</dd>" for k, v in facts)
    return (
        f'<section class="card {state}" id="table-{escape(_slug(t["table"]))}">'
        f'<h2>{escape(t["table"])} <span class="state {state}">{escape(words)}</span></h2>'
        f'<dl class="facts">{items}</dl>{timeline_svg(t)}'
        '<p class="note">Blue: family evidence (log10 of the average e-value); purple: the '
        "largest CUSUM of the change detectors; dashed red: alarm levels; red bars: alarms; "
        "shaded: the change-point set; dotted: the retrospective since-when estimate.</p>"
        "</section>"
    )


def _slug(text: str) -> str:
    return "".join(c if c.isalnum() else "-" for c in text.lower())


def dashboard_html(payload: dict[str, Any]) -> str:
    """The dashboard page for a fleet payload (``FleetStatus.as_json()``)."""
    tables = payload["tables"]
    rows = []
    for t in tables:
        state, words = _state(t)
        rows.append(
            "<tr>"
            f'<td><a href="#table-{escape(_slug(t["table"]))}">{escape(t["table"])}</a></td>'
            f"<td>{_thousands(t['decks'])}</td>"
            f"<td>{escape(t['last_ingest'])}</td>"
            f"<td>{escape(str(t['last_deck_time']))}</td>"
            f"<td>{_evidence_cell(t)}</td>"
            f'<td class="state {state}">{escape(words)}</td>'
            f"<td>{escape(_change_text(t))}</td>"
            "</tr>"
        )
    alarms = sum(1 for t in tables if _state(t)[0] == "alarm")
    head = (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        "<title>shufflecheck monitoring: fleet dashboard</title>"
        f"<style>{_STYLE}</style></head><body><main>"
    )
    summary = (
        "<h1>Fleet monitoring</h1>"
        f'<p class="meta">Store {escape(payload["store"])} (schema version '
        f"{payload['schema_version']}); generated {escape(payload['generated_at'])}; "
        f"{len(tables)} table(s), {alarms} with an alarm.</p>"
        '<p class="note">Evidence is an anytime-valid e-value: on a uniformly random '
        "machine the chance that it ever reaches its alarm level is at most alpha, however "
        "often this page is read. The change detector guarantees a mean run length to a "
        "false alarm of at least the stated number of decks.</p>"
        '<table class="fleet"><thead><tr><th>table</th><th>decks</th><th>last ingest</th>'
        "<th>last deck recorded</th><th>evidence (e-value)</th><th>alarms</th>"
        "<th>change point</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
    )
    cards = "".join(_table_card(t) for t in tables)
    sources = "".join(f"<li>{escape(s)}</li>" for s in SOURCES)
    tail = (
        f'<p class="caution note">{escape(payload["caution"])}</p>'
        f'<h2>Methods</h2><ol class="note">{sources}</ol></main></body></html>\n'
    )
    return head + summary + cards + tail
