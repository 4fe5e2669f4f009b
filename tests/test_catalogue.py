"""A catalogue of bad inputs: each one must end in a CaseError that names the field, the value
given and what is allowed (DESIGN.md section 5; the CLI prints the same paragraph).

Each row mutates the minimal valid case (tests/conftest.py), writes it as a case file next to any
data file it needs, then loads and evaluates it. Some mistakes can only be seen once the numbers
are computed (a default recovery std against the supervisory mean, a master scale that does not
close at 1), so evaluate() is part of the edge too.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import copy_data, minimal_case_dict, write_case
from obligor_memo.engine.analysis import analyse
from obligor_memo.engine.errors import CaseError, show_value
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case

Mutation = Callable[[Path], Path]


def edit(change: Callable[[dict[str, Any]], None], name: str = "case.json") -> Mutation:
    """A mutation of the case's data, written as JSON (so NaN and infinity survive the writing)."""

    def mutate(folder: Path) -> Path:
        data = minimal_case_dict()
        change(data)
        return write_case(folder, data, name)

    return mutate


def _json_text(change: Callable[[str], str]) -> Mutation:
    """A mutation of the case's JSON text (for tokens no mapping can hold, such as huge numbers)."""

    def mutate(folder: Path) -> Path:
        path = folder / "case.json"
        path.write_text(change(json.dumps(minimal_case_dict())), encoding="utf-8")
        return path

    return mutate


def yaml_text(change: Callable[[str], str]) -> Mutation:
    """A mutation of the case's YAML text (for mistakes a mapping cannot hold)."""

    def mutate(folder: Path) -> Path:
        path = folder / "case.yaml"
        text = yaml.safe_dump(minimal_case_dict(), sort_keys=False)
        path.write_text(change(text), encoding="utf-8")
        return path

    return mutate


def statements_file(data_name: str) -> Mutation:
    """The case reads its statements from a file of tests/data (copied next to the case)."""

    def mutate(folder: Path) -> Path:
        copy_data(folder, data_name)
        data = minimal_case_dict()
        data["statements"] = {"file": data_name}
        return write_case(folder, data, "case.yaml")

    return mutate


def setter(*path: Any, value: Any) -> Callable[[dict[str, Any]], None]:
    """Set data[path...] = value, creating mappings on the way."""

    def change(data: dict[str, Any]) -> None:
        node = data
        for key in path[:-1]:
            if isinstance(key, str) and key not in node:
                node[key] = {}
            node = node[key]
        node[path[-1]] = value

    return change


def dropper(*path: Any) -> Callable[[dict[str, Any]], None]:
    def change(data: dict[str, Any]) -> None:
        node = data
        for key in path[:-1]:
            node = node[key]
        del node[path[-1]]

    return change


def both(*changes: Callable[[dict[str, Any]], None]) -> Callable[[dict[str, Any]], None]:
    def change(data: dict[str, Any]) -> None:
        for c in changes:
            c(data)

    return change


def _duplicate_facility(data: dict[str, Any]) -> None:
    data["facilities"].append(dict(data["facilities"][0]))


def _flat_assets(data: dict[str, Any]) -> None:
    for row in data["statements"]:
        row["total_assets"] = 100.0


def _add_duplicate_name_key(text: str) -> str:
    return text.replace("  name: Test Borrower\n", "  name: Test Borrower\n  name: Other Borrower\n")


def _break_yaml(text: str) -> str:
    # A second colon on the currency line: YAML forbids a mapping value there.
    return text.replace("  currency: EUR\n", "  currency: EUR: x\n")


def _currency_line(text: str) -> int:
    return text.splitlines().index("  currency: EUR") + 1


def _in_long_folder(name: str) -> Mutation:
    """A case file several long folders deep: its full path is far longer than a short value."""

    def mutate(folder: Path) -> Path:
        deep = folder / ("annual_review_of_the_borrower_" * 2) / "working_papers_and_statements"
        deep.mkdir(parents=True)
        return write_case(deep, minimal_case_dict(), name)

    return mutate


_BASE_YAML = yaml.safe_dump(minimal_case_dict(), sort_keys=False)
_BAD_YAML_LINE = _currency_line(_BASE_YAML)
_DUP_KEY_LINE = _BASE_YAML.splitlines().index("  name: Test Borrower") + 2
_MARKET = {"equity_value": 50.0, "equity_volatility": 0.4, "risk_free_rate": 0.02}

# The largest recovery std of a beta law on [0, u] with mean m is sqrt(m (u - m)) (the variance
# of a law on [0, u] with mean m is at most m (u - m), reached by the two-point law on {0, u};
# Bhatia-Davis inequality). Messages print it to 4 decimals.
_STD_LIMIT_06_08 = f"{math.sqrt(0.6 * (0.8 - 0.6)):.4f}"
# Basel III final senior unsecured LGD 40 % (from memory) -> mean recovery 0.6 on [0, 1].
_STD_LIMIT_DEFAULT = f"{math.sqrt(0.6 * 0.4):.4f}"

# Each row: id, mutation, expected field path, fragment of the shown value, fragment of "allowed".
CATALOGUE = [
    (
        "unknown key with suggestion",
        edit(setter("borrower", "nmae", value="Test")),
        "borrower.nmae",
        "'Test'",
        "did you mean 'name'?",
    ),
    ("unknown top-level key", edit(lambda d: d.update(facilites=[])), "facilites", "[]", "did you mean 'facilities'?"),
    (
        "unknown facility key",
        edit(setter("facilities", 0, "comitted", value=50.0)),
        "facilities[0].comitted",
        "50.0",
        "did you mean 'committed'?",
    ),
    ("missing borrower name", edit(dropper("borrower", "name")), "borrower.name", "empty (null)", "required"),
    ("currency 'euro'", edit(setter("borrower", "currency", value="euro")), "borrower.currency", "'euro'", "ISO 4217"),
    (
        "duplicate years",
        edit(setter("statements", 2, "year", value=2020)),
        "statements[2].year",
        "2020",
        "each year once",
    ),
    (
        "fractional year",
        edit(setter("statements", 2, "year", value=2019.5)),
        "statements[2].year",
        "2019.5",
        "a whole number",
    ),
    (
        "NaN total assets in JSON",
        edit(setter("statements", 1, "total_assets", value=float("nan"))),
        "statements[1].total_assets",
        "nan",
        "not NaN or infinity",
    ),
    (
        "infinite liabilities in JSON",
        edit(setter("statements", 1, "short_term_liabilities", value=float("inf"))),
        "statements[1].short_term_liabilities",
        "inf",
        "not NaN or infinity",
    ),
    (
        "negative total assets",
        edit(setter("statements", 1, "total_assets", value=-5.0)),
        "statements[1].total_assets",
        "-5.0",
        "from 0 (exclusive)",
    ),
    (
        "zero total assets",
        edit(setter("statements", 1, "total_assets", value=0.0)),
        "statements[1].total_assets",
        "0.0",
        "from 0 (exclusive)",
    ),
    (
        "negative liabilities",
        edit(setter("statements", 3, "long_term_liabilities", value=-1.0)),
        "statements[3].long_term_liabilities",
        "-1.0",
        "a number from 0 to",
    ),
    ("statements not a list", edit(setter("statements", value="none")), "statements", "'none'", "a list"),
    (
        "two years with estimated volatility",
        edit(lambda d: d.update(statements=d["statements"][:2])),
        "statements",
        "2 year(s)",
        "at least three years",
    ),
    (
        "window larger than the statements",
        edit(setter("pd", "window_years", value=9)),
        "pd.window_years",
        "9",
        "at most the 4 years",
    ),
    (
        "override without reason",
        edit(setter("pd", "override", value=0.02)),
        "pd.override_reason",
        "empty (null)",
        "a non-empty reason",
    ),
    (
        "market method without market block",
        edit(setter("pd", "method", value="market")),
        "pd.method",
        "'market'",
        "together with a market block",
    ),
    (
        "market block with zero equity",
        edit(both(setter("pd", "method", value="market"), setter("market", value={**_MARKET, "equity_value": 0.0}))),
        "market.equity_value",
        "0.0",
        "from 0 (exclusive)",
    ),
    (
        "infeasible recovery std gives the largest allowed",
        edit(setter("facilities", 0, "recovery", value={"mean": 0.6, "std": 0.4, "upper": 0.8})),
        "facilities[0].recovery.std",
        "0.4",
        f"below {_STD_LIMIT_06_08}",
    ),
    (
        "recovery mean above upper",
        edit(setter("facilities", 0, "recovery", value={"mean": 0.95, "std": 0.1, "upper": 0.9})),
        "facilities[0].recovery.mean",
        "0.95",
        "at most upper = 0.9",
    ),
    (
        "default recovery std too wide for the supervisory mean",
        edit(setter("lgd", "default_recovery_std", value=0.5)),
        "lgd.default_recovery_std",
        "0.5",
        f"below {_STD_LIMIT_DEFAULT}",
    ),
    ("duplicate facility ids", edit(_duplicate_facility), "facilities[1].id", "'F1'", "a unique id"),
    (
        "unknown facility kind",
        edit(setter("facilities", 0, "kind", value="overdraft")),
        "facilities[0].kind",
        "'overdraft'",
        "'letter_of_credit'",
    ),
    (
        "unknown seniority",
        edit(setter("facilities", 0, "seniority", value="senior")),
        "facilities[0].seniority",
        "'senior'",
        "'senior_unsecured'",
    ),
    ("ccf 1.5", edit(setter("facilities", 0, "ccf", value=1.5)), "facilities[0].ccf", "1.5", "a number from 0 to 1"),
    (
        "maturity 0",
        edit(setter("facilities", 0, "maturity_years", value=0)),
        "facilities[0].maturity_years",
        "0",
        "from 0 (exclusive) to 50",
    ),
    (
        "drawn negative",
        edit(setter("facilities", 0, "drawn", value=-1.0)),
        "facilities[0].drawn",
        "-1.0",
        "a number from 0 to",
    ),
    (
        "string where a number belongs",
        edit(setter("facilities", 0, "committed", value="fifty")),
        "facilities[0].committed",
        "'fifty'",
        "a number",
    ),
    (
        "text for true/false",
        edit(setter("facilities", 0, "cancellable", value="yes")),
        "facilities[0].cancellable",
        "'yes'",
        "true or false",
    ),
    (
        "collateral haircut 100 %",
        edit(setter("facilities", 0, "collateral", value={"value": 10.0, "haircut": 1.0})),
        "facilities[0].collateral.haircut",
        "1.0",
        "to 1 (exclusive)",
    ),
    ("no facilities", edit(setter("facilities", value=[])), "facilities", "[]", "at least 1"),
    (
        "default point of zero",
        edit(setter("pd", "default_point", value={"short_term_share": 0.0, "long_term_share": 0.0})),
        "pd.default_point",
        "0 EUR",
        "default point above 0",
    ),
    (
        "default point share above 1",
        edit(setter("pd", "default_point", value={"short_term_share": 1.2})),
        "pd.default_point.short_term_share",
        "1.2",
        "a number from 0 to 1",
    ),
    (
        "asset volatility override 0",
        edit(setter("pd", "asset_volatility", value=0.0)),
        "pd.asset_volatility",
        "0.0",
        "from 0 (exclusive) to 3",
    ),
    ("flat assets give a zero volatility estimate", edit(_flat_assets), "pd.asset_volatility", "0.0", "above 0"),
    ("horizon 0", edit(setter("pd", "horizon_years", value=0)), "pd.horizon_years", "0", "from 0 (exclusive) to 30"),
    (
        "master-scale row above 1",
        edit(setter("pd", "master_scale", value=[{"grade": "A", "pd_upper": 1.5}])),
        "pd.master_scale[0].pd_upper",
        "1.5",
        "from 0 (exclusive) to 1",
    ),
    (
        "master scale that does not reach 1",
        edit(setter("pd", "master_scale", value=[{"grade": "A", "pd_upper": 0.01}, {"grade": "B", "pd_upper": 0.5}])),
        "pd.master_scale",
        "'grade': 'A'",
        "must reach 1.0",
    ),
    (
        "ccf-by-grade row with ccf 2",
        edit(setter("exposure", "ccf_by_grade", value=[{"grade": "A", "ccf": 2.0}])),
        "exposure.ccf_by_grade[0].ccf",
        "2.0",
        "a number from 0 to 1",
    ),
    (
        "ccf-by-grade row with an unknown kind",
        edit(setter("exposure", "ccf_by_grade", value=[{"grade": "A", "ccf": 0.5, "kind": "loan"}])),
        "exposure.ccf_by_grade[0].kind",
        "'loan'",
        "'term_loan'",
    ),
    (
        "pd_floor out of range",
        edit(setter("capital", "pd_floor", value=0.5)),
        "capital.pd_floor",
        "0.5",
        "from 1e-05 to 0.01",
    ),
    (
        "confidence 100 %",
        edit(setter("capital", "confidence", value=1.0)),
        "capital.confidence",
        "1.0",
        "to 1 (exclusive)",
    ),
    (
        "unknown CCF standard",
        edit(setter("exposure", "ccf_standard", value="basel_iv")),
        "exposure.ccf_standard",
        "'basel_iv'",
        "'basel_iii'",
    ),
    (
        "YAML duplicate key",
        yaml_text(_add_duplicate_name_key),
        f"case.yaml, line {_DUP_KEY_LINE}",
        "'name'",
        "each key once",
    ),
    (
        "invalid YAML",
        yaml_text(_break_yaml),
        f"case.yaml, line {_BAD_YAML_LINE}, column {len('  currency: EUR:')}",
        "mapping values are not allowed",
        "valid YAML",
    ),
    (
        "statements file that does not exist",
        edit(setter("statements", value={"file": "missing.csv"}), name="case.yaml"),
        "statements.file",
        "'missing.csv'",
        "a CSV or XLSX file that exists",
    ),
    (
        "statements CSV with a bad cell",
        statements_file("bad_cell.csv"),
        "statements file bad_cell.csv, row 3, column total_assets",
        "'abc'",
        "a number such as",
    ),
    (
        "statements CSV with a misspelled column",
        statements_file("misspelled_header.csv"),
        "statements file misspelled_header.csv, header",
        "'total_asets'",
        "did you mean 'total_assets'?",
    ),
    (
        "statements XLSX that is not a workbook",
        statements_file("broken.xlsx"),
        "statements file broken.xlsx",
        "not a valid .xlsx",
        "an Excel 2007+ workbook",
    ),
    (
        "wrong ending deep in a long path",
        _in_long_folder("case.txt"),
        "CASE",
        "case.txt",
        "ending in .yaml, .yml or .json",
    ),
    # ---- keys of the credit-depth steps (market PD, grades, LGD, capital, pricing, what-ifs)
    (
        "PD measure unknown",
        edit(setter("pd", "measure", value="real_world")),
        "pd.measure",
        "'real_world'",
        "'risk_neutral' or 'physical'",
    ),
    (
        "market asset drift 500 %",
        edit(setter("market", value={**_MARKET, "asset_drift": 5.0})),
        "market.asset_drift",
        "5.0",
        "a number from -1 to 1",
    ),
    (
        "equity volatility 700 %",
        edit(setter("market", value={**_MARKET, "equity_volatility": 7.0})),
        "market.equity_volatility",
        "7.0",
        "from 0 (exclusive) to 5",
    ),
    (
        "downturn method unknown",
        edit(setter("lgd", "downturn", "method", value="severe")),
        "lgd.downturn.method",
        "'severe'",
        "'none', 'quantile' or 'add_on'",
    ),
    (
        "downturn quantile below the median",
        edit(setter("lgd", "downturn", "quantile", value=0.3)),
        "lgd.downturn.quantile",
        "0.3",
        "a number from 0.5 to 1 (exclusive)",
    ),
    (
        "downturn add-on of 80 points",
        edit(setter("lgd", "downturn", "add_on", value=0.8)),
        "lgd.downturn.add_on",
        "0.8",
        "a number from 0 to 0.5",
    ),
    (
        "recovery join unknown",
        edit(setter("capital", "recovery_join", value="gaussian")),
        "capital.recovery_join",
        "'gaussian'",
        "'comonotonic' or 'independent'",
    ),
    (
        "annual sales of zero",
        edit(setter("capital", "annual_sales_eur_millions", value=0)),
        "capital.annual_sales_eur_millions",
        "0",
        "from 0 (exclusive)",
    ),
    (
        "scaling factor as a number",
        edit(setter("capital", "scaling_factor", value=1.06)),
        "capital.scaling_factor",
        "1.06",
        "true or false",
    ),
    (
        "pricing without a proposed spread",
        edit(setter("pricing", value={"hurdle_rate": 0.12})),
        "pricing.proposed_spread",
        "null",
        "a value (this key is required)",
    ),
    (
        "hurdle rate typed as a percentage",
        edit(setter("pricing", value={"proposed_spread": 0.02, "hurdle_rate": 12})),
        "pricing.hurdle_rate",
        "12",
        "a number from 0 to 1",
    ),
    (
        "capital basis unknown",
        edit(setter("pricing", value={"proposed_spread": 0.02, "capital_basis": "book"})),
        "pricing.capital_basis",
        "'book'",
        "'economic' or 'regulatory'",
    ),
    (
        "economic method unknown",
        edit(setter("capital", "economic_method", value="portfolio")),
        "capital.economic_method",
        "'portfolio'",
        "'single_factor' or 'standalone'",
    ),
    (
        "economic correlation of one",
        edit(setter("capital", "economic_correlation", value=1.0)),
        "capital.economic_correlation",
        "1.0",
        "to 1 (exclusive)",
    ),
    (
        "effective maturity unknown",
        edit(setter("capital", "effective_maturity", value="advanced")),
        "capital.effective_maturity",
        "'advanced'",
        "'foundation' or 'own'",
    ),
    (
        "capital CCF basis unknown",
        edit(setter("capital", "capital_ccf", value="advanced")),
        "capital.capital_ccf",
        "'advanced'",
        "'exposure' or 'foundation'",
    ),
    (
        "commitment fee typed as a percentage",
        edit(setter("pricing", value={"proposed_spread": 0.02, "commitment_fee_rate": 25})),
        "pricing.commitment_fee_rate",
        "25",
        "a number from 0 to 0.2",
    ),
    (
        "facility issuance fee typed as a percentage",
        edit(setter("facilities", 0, "pricing", value={"issuance_fee_rate": 1.5})),
        "facilities[0].pricing.issuance_fee_rate",
        "1.5",
        "less than or equal to 0.2",
    ),
    (
        "override horizon of zero",
        edit(setter("pd", value={"override": 0.02, "override_reason": "x", "override_horizon_years": 0})),
        "pd.override_horizon_years",
        "0",
        "from 0 (exclusive)",
    ),
    (
        "recovery support above 1.5",
        edit(setter("facilities", 0, "recovery", value={"mean": 0.9, "std": 0.1, "upper": 1.6})),
        "facilities[0].recovery.upper",
        "1.6",
        "to 1.5",
    ),
    (
        "sensitivity step of zero",
        edit(setter("sensitivity", "steps", value={"ccf": 0})),
        "sensitivity.steps.ccf",
        "0",
        "from 0 (exclusive) to 1",
    ),
    (
        "grid axis that runs backwards",
        edit(setter("sensitivity", "long_term_share_axis", value={"start": 0.8, "stop": 0.2})),
        "sensitivity.long_term_share_axis.stop",
        "0.2",
        "a value above start = 0.8",
    ),
    (
        "scenario names twice",
        edit(setter("scenarios", value=[{"name": "Stress", "set": {}}, {"name": "Stress", "set": {}}])),
        "scenarios[1].name",
        "'Stress'",
        "a unique scenario name",
    ),
    (
        "scenario sets an unknown path",
        edit(setter("scenarios", value=[{"name": "Stress", "set": {"pd.asset_grwth": -0.05}}])),
        "scenarios[0].set['pd.asset_grwth']",
        "-0.05",
        "pd.asset_growth",
    ),
    (
        "scenario moves a share out of range",
        edit(setter("scenarios", value=[{"name": "Stress", "set": {"pd.default_point.long_term_share": 1.5}}])),
        "scenarios[0].set['pd.default_point.long_term_share']",
        "1.5",
        "a number from 0 to 1",
    ),
    ("memo page size A3", edit(setter("memo", "page_size", value="A3")), "memo.page_size", "'A3'", "'A4' or 'Letter'"),
    (
        "negative collateral value",
        edit(setter("facilities", 0, "collateral", value={"value": -5.0, "haircut": 0.2})),
        "facilities[0].collateral.value",
        "-5.0",
        "a number from 0 to",
    ),
    # Bad input at scale: every number token, list and mapping under a stated limit.
    (
        "integer of 5,000 digits in JSON",
        _json_text(lambda t: t.replace('"currency": "EUR"', '"currency": ' + "9" * 5000, 1)),
        "case.json, line 1",
        "5,000 digits",
        "at most 50 digits",
    ),
    (
        "integer of 5,000 digits in YAML",
        yaml_text(lambda t: t.replace("  currency: EUR\n", "  currency: " + "9" * 5000 + "\n")),
        f"case.yaml, line {_BAD_YAML_LINE}",
        "5,000 digits",
        "at most 50 digits",
    ),
    (
        "float of 400 digits in YAML",
        yaml_text(lambda t: t.replace("  currency: EUR\n", "  currency: 1." + "5" * 400 + "\n")),
        f"case.yaml, line {_BAD_YAML_LINE}",
        "401 digits",
        "at most 50 digits",
    ),
    (
        "5,000 scenarios",
        edit(setter("scenarios", value=[{"name": f"S{i}", "set": {}} for i in range(5000)])),
        "scenarios",
        "5000 items",
        "at most 50 items",
    ),
    (
        "5,000 facilities",
        edit(lambda d: d.__setitem__("facilities", [dict(d["facilities"][0], id=f"F{i}") for i in range(5000)])),
        "facilities",
        "5000 items",
        "at most 100 items",
    ),
    (
        "1,000 master-scale rows",
        edit(setter("pd", "master_scale", value=[{"grade": f"G{i}", "pd_upper": (i + 1) / 1000} for i in range(1000)])),
        "pd.master_scale",
        "1000 items",
        "at most 30 items",
    ),
    (
        "5,000 CCF-by-grade rows",
        edit(setter("exposure", "ccf_by_grade", value=[{"grade": f"G{i}", "ccf": 0.5} for i in range(5000)])),
        "exposure.ccf_by_grade",
        "5000 items",
        "at most 200 items",
    ),
    (
        "500 statement years",
        edit(lambda d: d.__setitem__("statements", [dict(d["statements"][0], year=1600 + i) for i in range(500)])),
        "statements",
        "500 items",
        "at most 200 items",
    ),
    (
        "a scenario setting 500 inputs",
        edit(setter("scenarios", value=[{"name": "Wide", "set": {f"pd.key{i}": 0.1 for i in range(500)}}])),
        "scenarios[0].set",
        "500 items",
        "at most 50 items",
    ),
    (
        "5,000 unknown keys",
        edit(lambda d: d.update({f"extra_key_{i}": 1 for i in range(5000)})),
        "case",
        "5,000 unknown keys",
        "the first 10 are named",
    ),
    (
        "an unknown key of 100,000 characters",
        edit(lambda d: d.update({"k" * 100_000: 1})),
        "k" * 100_000,
        "1",
        "no such key",
    ),
    # YAML read by the 1.2 core schema: text stays text.
    (
        "yes as a true/false value",
        yaml_text(lambda t: t + "capital:\n  scaling_factor: yes\n"),
        "capital.scaling_factor",
        "'yes'",
        "true or false",
    ),
    (
        "012 as a whole number",
        yaml_text(lambda t: t + "pd:\n  window_years: 012\n"),
        "pd.window_years",
        "'012'",
        "a whole number",
    ),
]


def test_catalogue_is_large_enough() -> None:
    ids = [row[0] for row in CATALOGUE]
    assert len(set(ids)) == len(ids) >= 25


@pytest.mark.parametrize(
    ("mutation", "field", "value_fragment", "allowed_fragment"),
    [pytest.param(*row[1:], id=row[0]) for row in CATALOGUE],
)
def test_bad_input_is_named(
    tmp_path: Path, mutation: Mutation, field: str, value_fragment: str, allowed_fragment: str
) -> None:
    path = mutation(tmp_path)
    with pytest.raises(CaseError) as caught:
        analyse(load_case(path))  # the command line's path: scenarios are checked here too
    error = caught.value
    matches = [p for p in error.problems if p.field == field]
    assert matches, f"no problem filed under {field!r}; got {error.fields}"
    problem = matches[0]
    assert value_fragment in show_value(problem.value), problem
    assert allowed_fragment in problem.allowed, problem
    # The one paragraph a user reads carries all three parts.
    paragraph = error.paragraph()
    assert field in paragraph and allowed_fragment in paragraph
    assert "Traceback" not in paragraph and "\n" not in paragraph


def test_the_minimal_case_itself_is_valid(tmp_path: Path) -> None:
    # Guards the catalogue: every row's error must come from its mutation alone.
    results = evaluate(load_case(write_case(tmp_path, minimal_case_dict())))
    assert 0 < results.pd.pd < 1


def test_several_mistakes_are_reported_together(tmp_path: Path) -> None:
    data = minimal_case_dict()
    data["borrower"]["currency"] = "euro"
    data["facilities"][0]["ccf"] = 1.5
    data["facilities"][0]["maturity_years"] = 0
    with pytest.raises(CaseError) as caught:
        load_case(write_case(tmp_path, data))
    assert set(caught.value.fields) >= {"borrower.currency", "facilities[0].ccf", "facilities[0].maturity_years"}
