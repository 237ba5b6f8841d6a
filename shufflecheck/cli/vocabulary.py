"""One vocabulary for the command line and the input files: every option and file key, with
its one meaning, as the table of ``docs/options.md``.

:data:`OPTIONS` gives the meaning of every option name and :data:`FILE_KEYS` of every key
the file readers accept; :func:`markdown_table` lists them with the commands that take
each option and the values it takes, read from the typer app and the readers themselves
(a test compares the table with ``docs/options.md``). :func:`vocabulary_problems` names
what breaks the vocabulary: an option or key without a declared meaning, a meaning
declared for nothing, or one idea under two names (:data:`CONCEPTS`).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from typing import Any

__all__ = [
    "CONCEPTS",
    "FILE_KEYS",
    "OPTIONS",
    "command_options",
    "file_keys",
    "key_table",
    "markdown_table",
    "option_table",
    "vocabulary_problems",
]

#: the meaning of every option name, the same in every command that takes it
OPTIONS: dict[str, str] = {
    "--allow-outside": "let a policy file name files outside its own folder (trusted files only)",
    "--alpha": "error level of the tests: family-wise (Holm) for a battery, ever for monitoring",
    "--arl": "monitoring: mean decks to a false change alarm",
    "--at-least": "slug cards in the observer's window that count as a catch",
    "--by": "column whose values group the decks (tables, machines)",
    "--cards": "cards per deck",
    "--class": "a conjugacy class of S_n, written as its cycle type",
    "--columns": "the columns of a log without a header row, in order",
    "--confidence": "confidence level of intervals and lower bounds",
    "--coverage": "share of the slug that the spread figure covers",
    "--csv": "write a table to this CSV data file",
    "--deck": "the deck or shoe: a deck definition TOML file, or shoe(packs=6)",
    "--decks": "decks written to a log (simulate)",
    "--engine": "how a large audit or ingest is run: one process or a Dask cluster",
    "--every": "seconds between the recorded times of consecutive decks",
    "--feature": "what a game sees of a card (rank, blackjack value, ...; distinct: all apart)",
    "--force": "replace existing outputs (never an input of the command)",
    "--format": "format of a log file (default: from its extension)",
    "--from": "first simulated deck of a change of procedure (with --then)",
    "--hands": "packets a of an a-shuffle (2: an ordinary riffle)",
    "--hold": "transposition: chance that a step leaves the deck alone",
    "--json": "print the result as JSON on stdout",
    "--labels": "how a log names cards: codes, or integer labels",
    "--log": "a recorded log, given as an option where the argument is a procedure",
    "--max-steps": "the largest number of steps shown",
    "--method": "transposition: how the exact distance is computed",
    "--metric": "the distance a target applies to",
    "--name": "the name written into an output procedure file",
    "--not-riffles": "write the rows that are not one riffle to this CSV data file",
    "--order-column": "the column of a log holding the deck orders",
    "--out": "an output data file (a log, a procedure file), never a report",
    "--placement": "where the observer's window sits in the shoe",
    "--plot": "draw the command's figure to this PNG file",
    "--position-columns": "the position columns of a wide log, top card first",
    "--power": "the chance of flagging the procedure that a plan asks for",
    "--procedure": "a procedure written out, e.g. 'riffle x3, strip, riffle, cut'",
    "--quarantine": "set the bad rows of a log aside into this CSV data file",
    "--reference": "what each deck is compared with: the order before its shuffle",
    "--repeat": "how many times the procedure is run: R, or A-B for each of A..B",
    "--report": "write a report folder here (HTML with JSON; Markdown and figures for reports)",
    "--samples": "simulated logs behind the Monte Carlo tests",
    "--scheduler": "address of a running Dask scheduler",
    "--seed": "random seed, 0 or more: every random result is reproducible from it",
    "--segment": "shoes: the reference positions the zone test follows, START:CARDS",
    "--separator": "what separates the cards inside a log's order field",
    "--shape": "an irreducible character of S_n, written as its shape",
    "--shelves": "shelves of a shelf machine",
    "--show-shapes": "how many shapes the terminal lists per eigenvalue",
    "--simulate": "simulated decks (or shoes) behind an estimate",
    "--slug": "the reference positions of a slug of cards, START:CARDS",
    "--start": "the order of the deck before the first step (reference, blocks or alternating)",
    "--start-time": "the recorded time of the first simulated deck",
    "--table": "the table (or machine) the decks belong to",
    "--target": "the distance to random that a count of steps must reach",
    "--then": "a second procedure that takes over during a simulated log (a fault)",
    "--time": "the column with the time of each deck",
    "--time-format": "strptime format of the --time column",
    "--version": "print the version and exit",
    "--window": "cards the observer follows",
    "--workers": "workers of the local Dask cluster",
}

#: one idea, one name: an option whose help matches the pattern must have this name
CONCEPTS: dict[str, str] = {
    "--simulate": r"\bsimulated (decks|shoes)\b",
    "--report": r"^(write a |folder for the )?(report folder|dashboard)",
    "--plot": r"\bto this PNG\b",
    "--seed": r"\brandom seed\b",
    "--repeat": r"\bhow many times the procedure is run\b",
}

#: the meaning of every key of the input files, by file and table
FILE_KEYS: dict[tuple[str, str], str] = {
    ("policy file, [policy]", "title"): "the policy's title in reports",
    ("policy file, [policy]", "metric"): "the distance the target applies to (as --metric)",
    ("policy file, [policy]", "target"): "the distance to random every procedure must reach",
    ("policy file, [policy]", "confidence"): "confidence level of intervals and lower bounds",
    ("policy file, [policy]", "simulate"): "simulated decks per procedure (as --simulate)",
    ("policy file, [policy]", "seed"): "random seed, 0 or more (as --seed)",
    ("policy file, [policy]", "max_repeats"): "the largest repetition count searched",
    ("policy file, [policy]", "alpha"): "family-wise error level of the log audits (Holm)",
    ("policy file, [[procedure]]", "name"): "the procedure's name",
    ("policy file, [[procedure]]", "cards"): "cards per deck",
    ("policy file, [[procedure]]", "packs"): "packs in a shoe of distinct cards (52 each)",
    ("policy file, [[procedure]]", "deck"): "a shoe of copies alike: shoe(packs=6) or a file",
    ("policy file, [[procedure]]", "feature"): "what the game sees of the shoe (as --feature)",
    ("policy file, [[procedure]]", "steps"): "the procedure written out",
    ("policy file, [[procedure]]", "file"): "a procedure file instead of steps",
    ("policy file, [[procedure]]", "house"): "the repetitions the house performs now",
    ("policy file, [[procedure]]", "log"): "recorded logs of the procedure ([[procedure.log]])",
    ("policy file, [[procedure]]", "description"): "free text",
    ("policy file, [[procedure]]", "max_repeats"): "the largest repetition count searched",
    ("policy file, [[procedure.log]]", "table"): "the table the log was recorded at",
    ("policy file, [[procedure.log]]", "path"): "the log file, relative to the policy file",
    ("policy file, [[procedure.log]]", "reference"): "what each deck is compared with",
    ("policy file, [[procedure.log]]", "labels"): "how the log names cards (as --labels)",
    ("policy file, [[procedure.log]]", "format"): "format of the log (as --format)",
    ("policy file, [[procedure.log]]", "deck"): "the deck definition or shoe (as --deck)",
    ("policy file, [[procedure.log]]", "by"): "column whose values group the decks",
    ("policy file, [[procedure.log]]", "time"): "the column with the time of each deck",
    ("procedure file", "name"): "the procedure's name",
    ("procedure file", "cards"): "cards per deck",
    ("procedure file", "packs"): "packs in a shoe of distinct cards (52 each)",
    ("procedure file", "steps"): "the procedure written out",
    ("procedure file", "description"): "free text",
    ("deck definition file", "name"): "the deck's name",
    ("deck definition file", "description"): "free text",
    ("deck definition file", "cards"): "the deck's cards in label order (or a built-in deck)",
    ("deck definition file", "copies"): "copies of each card: a shoe of cards alike",
    ("deck definition file", "codes"): "a reader's own codes for whole cards",
    ("deck definition file", "spelling"): "a reader's own spellings of ranks and suits",
}


def _commands(command: Any, path: tuple[str, ...] = ()) -> Iterator[tuple[str, Any]]:
    yield " ".join(path), command
    if hasattr(command, "list_commands"):
        for name in command.list_commands(None):
            yield from _commands(command.get_command(None, name), (*path, name))


def command_options() -> list[dict[str, Any]]:
    """Every option of every command: ``{"option", "short", "command", "values", "default",
    "help"}`` (``command`` is ``""`` for the program's own options), in help order."""
    import typer

    from shufflecheck.cli import app
    from shufflecheck.cli._app import plain_help

    found = []
    for path, command in _commands(typer.main.get_command(app)):
        ctx = command.context_class(command, info_name=path.split(" ")[-1] or "shufflecheck")
        for param in command.params:
            if param.param_type_name != "option" or getattr(param, "hidden", False):
                continue
            record = param.get_help_record(ctx)
            if record is None:
                continue
            long = next(o for o in param.opts if o.startswith("--"))
            short = next((o for o in param.opts if not o.startswith("--")), "")
            values = plain_help(record[0].split(long, 1)[1]).strip()
            text = " ".join(record[1].replace("\b", " ").split())
            default = re.search(r"\[default: ([^\]]*)\]", text)
            text = re.sub(r"\s*\[(default|required)[^\]]*\]", "", text)
            found.append(
                {
                    "option": long,
                    "short": short,
                    "command": path,
                    "values": values or "flag",
                    "default": default.group(1) if default else "",
                    "required": bool(getattr(param, "required", False)),
                    "help": text,
                }
            )
    return found


def file_keys() -> dict[str, tuple[str, ...]]:
    """The keys each input file accepts, read from the readers themselves."""
    from shufflecheck.analyses.policy import LOG_KEYS, POLICY_KEYS, PROCEDURE_KEYS
    from shufflecheck.models.procedures import PROCEDURE_FILE_KEYS
    from shufflecheck.records.shoes import DECK_FILE_KEYS

    return {
        "policy file, [policy]": tuple(POLICY_KEYS),
        "policy file, [[procedure]]": tuple(sorted(PROCEDURE_KEYS)),
        "policy file, [[procedure.log]]": tuple(sorted(LOG_KEYS)),
        "procedure file": tuple(sorted(PROCEDURE_FILE_KEYS)),
        "deck definition file": tuple(DECK_FILE_KEYS),
    }


def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def markdown_table() -> str:
    """The option and file-key tables of ``docs/options.md`` (:func:`option_table`, then
    :func:`key_table`)."""
    return option_table() + "\n" + key_table()


def option_table() -> str:
    """The table of every option: name, commands, meaning, values and defaults."""
    options = command_options()
    names: dict[str, list[dict[str, Any]]] = {}
    for item in options:
        names.setdefault(item["option"], []).append(item)
    lines = [
        "| option | commands | meaning | values |",
        "|---|---|---|---|",
    ]
    for name in sorted(names):
        uses = names[name]
        short = next((u["short"] for u in uses if u["short"]), "")
        label = f"`{name}`" + (f", `{short}`" if short else "")
        commands = ", ".join(u["command"] or "shufflecheck" for u in uses)
        forms = list(dict.fromkeys(u["values"] for u in uses))
        values = " or ".join(f"`{v}`" if v != "flag" else "flag" for v in forms)
        defaults: dict[str, list[str]] = {}
        for u in uses:
            if u["default"]:
                defaults.setdefault(u["default"], []).append(u["command"] or "shufflecheck")
        if len(defaults) == 1 and sum(map(len, defaults.values())) == len(uses):
            values += f"; default `{next(iter(defaults))}`"
        elif defaults:
            values += "; default " + ", ".join(
                f"`{d}` ({', '.join(c)})" for d, c in defaults.items()
            )
        if all(u["required"] for u in uses):
            values += "; required"
        meaning = OPTIONS.get(name, "(no declared meaning)")
        lines.append(f"| {label} | {commands} | {_cell(meaning)} | {_cell(values)} |")
    return "\n".join(lines) + "\n"


def key_table() -> str:
    """The table of every key of the input files, with its meaning."""
    lines = ["| file | key | meaning |", "|---|---|---|"]
    for file, keys in file_keys().items():
        for key in keys:
            meaning = FILE_KEYS.get((file, key), "(no declared meaning)")
            lines.append(f"| {file} | `{key}` | {_cell(meaning)} |")
    return "\n".join(lines) + "\n"


def vocabulary_problems() -> list[str]:
    """What breaks the one vocabulary (empty when nothing does): options and keys without a
    declared meaning, meanings declared for nothing, one idea under two names, and one
    name taken both as a flag and with a value."""
    options = command_options()
    problems = []
    used = {item["option"] for item in options}
    for name in sorted(used - set(OPTIONS)):
        problems.append(f"option {name} has no declared meaning in OPTIONS")
    for name in sorted(set(OPTIONS) - used):
        problems.append(f"OPTIONS declares {name}, which no command takes")
    for item in options:
        where = f"{item['command'] or 'shufflecheck'} {item['option']}"
        for concept, pattern in CONCEPTS.items():
            if item["option"] != concept and re.search(pattern, item["help"], re.IGNORECASE):
                problems.append(f"{where} means what {concept} means ({item['help']!r})")
    kinds: dict[str, set[bool]] = {}
    for item in options:
        kinds.setdefault(item["option"], set()).add(item["values"] == "flag")
    for name, flags in sorted(kinds.items()):
        if len(flags) > 1:
            problems.append(f"option {name} is a flag in some commands and takes a value in others")
    keys = file_keys()
    for file, names in keys.items():
        for key in names:
            if (file, key) not in FILE_KEYS:
                problems.append(f"{file} key {key!r} has no declared meaning in FILE_KEYS")
    for file, key in FILE_KEYS:
        if key not in keys.get(file, ()):
            problems.append(f"FILE_KEYS declares {file} key {key!r}, which no reader takes")
    return problems
