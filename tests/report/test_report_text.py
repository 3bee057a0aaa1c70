"""``parasite report`` as text: after the loop table, each loop's largest terms.

What is checked is the text against the report's own JSON and against the
loop solver's full list of terms: the loop names and segment ids of the demo
appear in the order of their terms, each segment names its routes-file entry,
and the printed segment terms plus the "rest of the copper" row add up to the
loop's printed value within the rounding of the printed digits (the terms add
up to the loop inductance exactly by Tellegen's theorem, see parasite.loops).
The JSON keys of the loops stay those of the command-line contract plus the
two lists of terms and the split between copper and parts ([[part]]).
"""

from __future__ import annotations

import re

import pytest

from tests.boards import ROOT

ROOT = ROOT
DEMO = ROOT / "fixtures" / "demo"
ROUTES = ROOT / "fixtures" / "routes"
TOP = 5

PREFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "": 1.0}
VALUE = re.compile(r"(-?[\d.]+(?:e[+-]?\d+)?) ([fpnum]?)H$")


def henries(text: str) -> float:
    m = VALUE.match(text.strip())
    assert m, text
    return float(m.group(1)) * PREFIX[m.group(2)]


def rounding(text: str) -> float:
    """Half a unit of the last printed digit of a value such as '1.33 nH' (H)."""
    m = VALUE.match(text.strip())
    assert m, text
    digits = m.group(1)
    decimals = len(digits.split(".")[1]) if "." in digits else 0
    return 0.5 * 10.0 ** -decimals * PREFIX[m.group(2)]


@pytest.fixture(scope="module")
def demo():
    from parasite.augment import augment_files
    from parasite.loops import loop_results
    from parasite.pipeline import extract, load_inputs
    from parasite.report import report_text

    net, routes = str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml")
    report = augment_files(net, routes).report
    inputs = load_inputs(net, routes)
    ex = extract(inputs)
    full = {r.name: r for r in loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)}
    return report, report_text(report), full


def blocks(text: str) -> dict[str, list[str]]:
    """The blocks of the largest-terms section, by loop name."""
    section = text.split("Largest terms of each loop")[1].split("\nProbes:")[0]
    out: dict[str, list[str]] = {}
    for chunk in section.strip().split("\n\n")[1:]:
        head, *rows = chunk.splitlines()
        out[head.split(": ")[0]] = [head] + rows
    return out


def test_section_follows_the_loop_table(demo) -> None:
    report, text, _ = demo
    assert text.index("Loops:") < text.index("Largest terms of each loop") < text.index("Probes:")
    assert list(blocks(text)) == [lp["name"] for lp in report["loops"]] == [
        "hot loop", "low-side gate loop"]


def test_rows_are_the_largest_terms_with_their_entries(demo) -> None:
    report, text, full = demo
    entry = {s["id"]: s["name"] or s["source"] for s in report["segments"]}
    for loop in report["loops"]:
        head, header, *rows = blocks(text)[loop["name"]]
        assert head.endswith(", largest terms")
        assert henries(head.split(": ")[1].split(",")[0]) == pytest.approx(loop["inductance"], rel=5e-3)
        assert header.split() == ["segment", "term", "share", "entry"]
        seg_rows = rows[:TOP]
        ids = [r.split()[0] for r in seg_rows]
        assert ids == [c["segment"] for c in loop["contributors"][:TOP]]
        assert ids == [sid for sid, _ in full[loop["name"]].contributors[:TOP]]
        assert set(ids) <= set(entry)
        for r, sid in zip(seg_rows, ids, strict=True):
            assert r.rstrip().endswith(entry[sid])
        mutual = [r for r in rows if r.endswith("mutual")]
        assert len(mutual) == min(TOP, len(loop["pair_contributors"]))
        assert [r.split()[0] + r.split()[2] for r in mutual] == [
            p["a"] + p["b"] for p in loop["pair_contributors"][:TOP]]


def test_segment_rows_add_up_to_the_printed_loop_value(demo) -> None:
    """Printed terms (3 significant digits) + the rest row = printed loop value,
    within the sum of the half-units of the printed digits; shares (whole
    percent) add up to 100% within half a percent per row. The rest row is
    checked against the solver's full list of terms, beyond the report's."""
    report, text, full = demo
    for loop in report["loops"]:
        head, _, *rows = blocks(text)[loop["name"]]
        value_text = head.split(": ")[1].split(",")[0]
        result = full[loop["name"]]
        assert len(result.contributors) > TOP  # the demo's loops have a rest row
        seg_rows = rows[:TOP + 1]
        assert seg_rows[-1].strip().startswith("rest of the copper")
        terms = [re.search(r"(-?[\d.]+ [fpnum]?H)", r).group(1) for r in seg_rows]  # type: ignore[union-attr]
        shares = [int(re.search(r"(-?\d+)%", r).group(1)) for r in seg_rows]  # type: ignore[union-attr]
        tolerance = sum(rounding(t) for t in terms) + rounding(value_text)
        assert abs(sum(henries(t) for t in terms) - henries(value_text)) <= tolerance
        assert abs(sum(shares) - 100) <= 0.5 * len(shares)
        rest = sum(t for _, t in result.contributors[TOP:])
        assert henries(terms[-1]) == pytest.approx(rest, abs=rounding(terms[-1]))


def test_library_results_and_report_dicts_print_the_same_rows(demo) -> None:
    from parasite.loops import format_loop_contributors

    report, _, full = demo
    from_dicts = format_loop_contributors(report["loops"]).splitlines()
    from_results = format_loop_contributors(list(full.values())).splitlines()
    strip = lambda lines: [ln.split()[:4] for ln in lines if "rest of the copper" not in ln]  # noqa: E731
    assert strip(from_dicts) == strip(from_results)
    for name, result in full.items():
        n = len(result.contributors) - 5
        block = "\n".join(from_results).split(f"{name}: ")[1]
        assert re.search(rf"rest of the copper \({n} segments\) +[+-]?[\d.]+ [fpnum]?H", block)


def test_json_keys_of_the_loops_are_unchanged(demo) -> None:
    report, _, _ = demo
    for loop in report["loops"]:
        assert set(loop) == {"name", "inductance", "resistance", "netlist_resistance", "frequency",
                             "limit", "within_limit", "contributors", "pair_contributors",
                             "copper_inductance", "parts_inductance", "parts"}


def test_a_loop_without_copper_says_so() -> None:
    from parasite.augment import augment_files
    from parasite.report import report_text

    report = augment_files(str(ROUTES / "loops.cir"), str(ROUTES / "loops.routes.toml")).report
    section = report_text(report).split("Largest terms of each loop")[1]
    for name in ("power loop", "gate", "no budget"):
        assert f"{name}: 0 H, no copper carries its current" in section
