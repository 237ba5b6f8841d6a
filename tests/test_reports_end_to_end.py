"""Report folders written by ``mix``, ``assess``, ``audit`` and ``policy --report`` (issue 6),
end to end through typer's CliRunner: the HTML parses with balanced tags and embeds its
figures, nothing points at the network, the Markdown tables carry the numbers of
report.json, folders are replaced only with --force, every report carries the cautions,
and the reproducibility block fingerprints the input files."""

from __future__ import annotations

import base64
import hashlib
import json
import re
import shutil
import textwrap
from html.parser import HTMLParser
from pathlib import Path

import pytest

from ._cli import run

KINDS = ("mix", "assess", "audit", "policy")
CAUTIONS = ("not a certification", "regulator", "accredited test laborator")
#: elements HTML defines without an end tag (WHATWG HTML, "void elements")
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source"}
VOID |= {"track", "wbr"}
DATA_URI = re.compile(r"data:[a-z]+/[a-z0-9.+-]+;base64,[A-Za-z0-9+/=]+")


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


class Inputs:
    """The files and commands behind the four reports."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.log = folder / "table.csv"
        result = run("simulate", "riffle x4", "--decks", 20, "--seed", 3, "--out", self.log)
        assert result.exit_code == 0, result.output
        self.policy = folder / "policy.toml"
        self.policy.write_text(
            textwrap.dedent(
                """
                [policy]
                title = "Report check (invented)"
                target = 0.1
                simulate = 300
                max_repeats = 10

                [[procedure]]
                name = "Ideal riffles"
                steps = "riffle"
                house = 7

                  [[procedure.log]]
                  table = "Table 3"
                  path = "table.csv"
                """
            ),
            encoding="utf-8",
        )

    def command(self, kind: str, variant: bool = False) -> list[object]:
        """Arguments of each command; ``variant`` changes one setting."""
        if kind == "mix":
            return ["mix", "riffle", "--cards", 52, "--target", 0.5 if variant else 0.1]
        if kind == "assess":
            return ["assess", "strip, riffle x8", "--repeat", "1-2", "--simulate", 1000]
        if kind == "audit":
            return ["audit", self.log, "--alpha", 0.05 if variant else 0.01]
        return ["policy", self.policy]


@pytest.fixture(scope="module")
def inputs(tmp_path_factory) -> Inputs:
    return Inputs(tmp_path_factory.mktemp("report-inputs"))


@pytest.fixture(scope="module")
def reports(inputs, tmp_path_factory) -> dict[str, Path]:
    out = {}
    base = tmp_path_factory.mktemp("reports")
    for kind in KINDS:
        folder = base / kind
        result = run(*inputs.command(kind), "--report", folder)
        assert result.exit_code == 0, (kind, result.output)
        out[kind] = folder
    return out


def read(folder: Path, name: str) -> str:
    return (folder / name).read_text(encoding="utf-8")


class _Checker(HTMLParser):
    """Collects unbalanced tags, image sources and link targets."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[tuple[str, tuple[int, int]]] = []
        self.problems: list[str] = []
        self.images: list[str] = []
        self.links: list[tuple[str, str, str]] = []
        self.declarations: list[str] = []

    def handle_decl(self, decl: str) -> None:
        self.declarations.append(decl)

    def handle_starttag(self, tag, attrs) -> None:
        values = dict(attrs)
        if tag == "img":
            self.images.append(values.get("src") or "")
        for name in ("src", "href", "action", "poster", "srcset"):
            if values.get(name):
                self.links.append((tag, name, values[name]))
        if tag not in VOID:
            self.stack.append((tag, self.getpos()))

    def handle_startendtag(self, tag, attrs) -> None:
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag) -> None:
        if tag in VOID:
            self.problems.append(f"end tag for void element {tag} at {self.getpos()}")
        elif not self.stack or self.stack[-1][0] != tag:
            opened = self.stack[-1] if self.stack else None
            self.problems.append(f"</{tag}> at {self.getpos()} closes {opened}")
        else:
            self.stack.pop()


def parse_html(text: str) -> _Checker:
    checker = _Checker()
    checker.feed(text)
    checker.close()
    return checker


@pytest.mark.parametrize("kind", KINDS)
class TestHtml:
    def test_parses_with_balanced_tags(self, reports, kind):
        checker = parse_html(read(reports[kind], "report.html"))
        assert checker.declarations == ["DOCTYPE html"]
        assert checker.problems == []
        assert checker.stack == []

    def test_images_embedded(self, reports, kind):
        folder = reports[kind]
        checker = parse_html(read(folder, "report.html"))
        report = json.loads(read(folder, "report.json"))
        figures = [f["file"] for s in report["sections"] for f in s["figures"]]
        assert len(checker.images) == len(figures) >= 1
        for src, file in zip(checker.images, figures, strict=True):
            assert src.startswith("data:image/png;base64,")
            png = base64.b64decode(src.split(",", 1)[1], validate=True)
            assert png == (folder / file).read_bytes()  # the same figure as figures/*.png

    def test_no_external_urls(self, reports, kind):
        text = read(reports[kind], "report.html")
        checker = parse_html(text)
        for tag, name, target in checker.links:
            assert target.startswith(("#", "data:")), (tag, name, target[:60])
        stripped = DATA_URI.sub("", text)
        for pattern in (r"https?:", r"\burl\(", r"@import", r"(?<![:\w/])//[\w-]+\.[\w.-]+"):
            found = re.findall(pattern, stripped, re.IGNORECASE)
            assert not found, (pattern, found[:3])
        assert not re.search(r"<(link|script|iframe|object|embed)\b", stripped, re.IGNORECASE)


def markdown_table(text: str, number: int) -> tuple[list[str], list[list[str]]]:
    """Headers and rows of the Markdown table captioned ``**Table N.**``."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(f"**Table {number}.**"))
    table = []
    for line in lines[start + 1 :]:
        if line.startswith("|"):
            table.append([cell.strip() for cell in line.strip().strip("|").split(" | ")])
        elif table:
            break
    headers, rule, *rows = table
    assert all(set(cell) <= set(":-") for cell in rule)
    return headers, rows


_NUMBER = re.compile(r"(?:\*\*)?([≤≥]\s*)?(-?[\d,]+(?:\.(\d+))?)(?:e([+-]?\d+))?(?:\*\*)?")


def shown(cell: str) -> tuple[float, float]:
    """The number a cell shows and half a unit of its last displayed digit."""
    match = _NUMBER.match(cell.split(" (")[0].strip())
    assert match, cell
    digits, decimals, exponent = match.group(2), match.group(3) or "", match.group(4) or "0"
    value = float(digits.replace(",", "")) * 10 ** int(exponent)
    half_unit = 0.5 * 10 ** (int(exponent) - len(decimals))
    return value, half_unit


def agrees(cell: str, value: float) -> bool:
    """The cell shows the value: to half a unit of its last digit, or for a bound (shown
    rounded outward, never claiming more than was proven) to one unit on the safe side."""
    number, half_unit = shown(cell)
    text = cell.lstrip("*")
    if text.startswith("≥"):
        return number <= value * (1 + 1e-12) + 1e-300 and value - number <= 2 * half_unit
    if text.startswith("≤"):
        return number >= value * (1 - 1e-12) - 1e-300 and number - value <= 2 * half_unit
    return abs(number - value) <= half_unit * (1 + 1e-9) + 1e-300


class TestMarkdownNumbers:
    def test_mix_table_matches_json(self, reports):
        folder = reports["mix"]
        headers, rows = markdown_table(read(folder, "report.md"), 1)
        data = json.loads(read(folder, "report.json"))["data"]
        assert headers[0] == "k" and headers[1].startswith("total variation")
        assert len(rows) == len(data["rows"])
        columns = {"total_variation": 1, "separation": 2, "kl_bits": 3}
        for cells, row in zip(rows, data["rows"], strict=True):
            assert cells[0].strip("*") == str(row["steps"])
            for metric, index in columns.items():
                assert agrees(cells[index], row[metric]), (row["steps"], metric, cells[index])
        bold = [cells[0].strip("*") for cells in rows if cells[0].startswith("**")]
        assert bold == [str(data["minimum_steps"]["total_variation"])]
        # and against the outside world: Bayer & Diaconis (1992), 0.334 after 7 riffles
        assert shown(rows[6][1])[0] == pytest.approx(0.3341)

    def test_audit_table_matches_json(self, reports):
        folder = reports["audit"]
        headers, rows = markdown_table(read(folder, "report.md"), 1)
        tests = {t["title"]: t for t in json.loads(read(folder, "report.json"))["data"]["tests"]}
        assert headers[0] == "test" and headers[1].startswith("p-value")
        assert len(rows) == len(tests)
        for cells in rows:
            test = tests[cells[0]]
            assert agrees(cells[1], test["p_value"]), (cells[0], cells[1], test["p_value"])
            assert agrees(cells[2], test["p_adjusted"]), (cells[0], cells[2])
            assert (cells[3] == "flagged") == test["flagged"]

    def test_assess_table_matches_json(self, reports):
        folder = reports["assess"]
        headers, rows = markdown_table(read(folder, "report.md"), 1)
        data = json.loads(read(folder, "report.json"))["data"]
        assert headers[1].startswith("total variation: lower")
        assert [cells[0] for cells in rows] == [str(r["repeats"]) for r in data["rows"]]
        for cells, row in zip(rows, data["rows"], strict=True):
            assert cells[1].startswith("≥") and cells[2].startswith("≤")
            lower = row["lower_bound"]["total_variation"]["value"]
            upper = row["upper_bound"]["total_variation"]["value"]
            assert agrees(cells[1], lower) and agrees(cells[2], upper)

    def test_displayed_bounds_round_outward(self, tmp_path):
        folder = tmp_path / "report"
        result = run(
            "assess", "strip, riffle x6", "--repeat", 1, "--simulate", 500, "--report", folder
        )
        assert result.exit_code == 0, result.output
        _, rows = markdown_table(read(folder, "report.md"), 1)
        row = json.loads(read(folder, "report.json"))["data"]["rows"][0]
        # the block riffle x6 gives TV <= 0.6135496 (exact, Bayer & Diaconis 1992: 0.614);
        # a bound shown to a reader must not claim more than was proven
        upper = row["upper_bound"]["total_variation"]["value"]
        lower = row["lower_bound"]["total_variation"]["value"]
        assert shown(rows[0][2])[0] >= upper
        assert shown(rows[0][1])[0] <= lower


class TestForce:
    @pytest.mark.parametrize("kind", KINDS)
    def test_existing_folder_kept_without_force(self, reports, inputs, kind):
        folder = reports[kind]
        before = {p.relative_to(folder): p.read_bytes() for p in folder.rglob("*") if p.is_file()}
        result = run(*inputs.command(kind, variant=True), "--report", folder)
        assert result.exit_code == 2
        assert "--force" in result.stderr and str(folder) in result.stderr
        after = {p.relative_to(folder): p.read_bytes() for p in folder.rglob("*") if p.is_file()}
        assert after == before

    @pytest.mark.parametrize("kind", ["mix", "audit"])
    def test_replaced_with_force(self, reports, inputs, tmp_path, kind):
        folder = tmp_path / "report"
        shutil.copytree(reports[kind], folder)
        result = run(*inputs.command(kind, variant=True), "--report", folder, "--force")
        assert result.exit_code == 0, result.output
        data = json.loads(read(folder, "report.json"))["data"]
        if kind == "mix":
            assert data["target"] == 0.5
            assert data["minimum_steps"]["total_variation"] == 7  # Bayer & Diaconis (1992)
        else:
            assert data["alpha"] == 0.05
        assert [p.name for p in tmp_path.iterdir()] == ["report"]  # no temporary left

    def test_foreign_folder_never_replaced(self, inputs, tmp_path):
        folder = tmp_path / "logs"
        folder.mkdir()
        (folder / "keep.csv").write_text("deck,order\n", encoding="utf-8")
        result = run(*inputs.command("mix"), "--report", folder, "--force")
        assert result.exit_code == 2
        assert (folder / "keep.csv").read_text(encoding="utf-8") == "deck,order\n"


@pytest.mark.parametrize("kind", KINDS)
class TestCautionsAndProvenance:
    def test_cautions_in_every_file(self, reports, kind):
        for name in ("report.md", "report.html", "report.json"):
            text = read(reports[kind], name).lower()
            for caution in CAUTIONS:
                assert caution in text, (kind, name, caution)

    def test_reproducibility_block(self, reports, inputs, kind):
        folder = reports[kind]
        block = json.loads(read(folder, "report.json"))["reproducibility"]
        assert block["tool_version"] and block["created_utc"] and block["command"]
        fingerprints = {Path(i["path"]).name: i["sha256"] for i in block["inputs"]}
        expected = {
            "mix": {},
            "assess": {},
            "audit": {"table.csv": sha256(inputs.log)},
            "policy": {"policy.toml": sha256(inputs.policy), "table.csv": sha256(inputs.log)},
        }[kind]
        assert fingerprints == expected
        if kind == "assess":
            assert {"name": "simulation", "seed": 1} in block["seeds"]
        for digest in expected.values():
            assert digest in read(folder, "report.md")
            assert digest in read(folder, "report.html")
