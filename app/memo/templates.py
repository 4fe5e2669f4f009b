"""Where the memo's templates and assets are, and the one Jinja2 environment that prints them.

The templates are the repository's templates/ folder, installed as ``obligor_memo.templates``;
the number formats the templates use are named filters (:mod:`obligor_memo.app.present.formatting`):
the templates do no arithmetic.
"""

from __future__ import annotations

import functools
import re
from importlib import resources
from pathlib import Path
from typing import Any

from obligor_memo.app.present import formatting as fmt


def find_templates() -> Path:
    """The memo's templates folder (``templates/`` of the checkout, or the installed copy).

    Returns
    -------
    Path
        The folder of the ``obligor_memo.templates`` package.

    Raises
    ------
    FileNotFoundError
        If the folder holds no memo.html.
    """
    folder = Path(str(resources.files("obligor_memo.templates")))
    if not (folder / "memo.html").is_file():
        raise FileNotFoundError(f"The memo templates (memo.html) were not found in {folder}. Reinstall obligor-memo.")
    return folder


TEMPLATES_DIR = find_templates()
ASSETS_DIR = Path(__file__).resolve().parent.parent / "assets"
PAGE_SIZES = {"A4": "A4", "Letter": "letter"}


@functools.lru_cache(maxsize=1)
def environment() -> Any:
    """One Jinja2 environment per process, which keeps the compiled templates.

    Compiling them took about 0.15 s of every memo; a template whose file has changed is
    compiled again.

    Returns
    -------
    Any
        The ``jinja2.Environment`` on :data:`TEMPLATES_DIR`: autoescaped, strict about
        undefined names, every printed value passed through :func:`breakable`, and the number
        formats and labels as filters.
    """
    from jinja2 import Environment, FileSystemLoader, StrictUndefined

    env = Environment(
        loader=FileSystemLoader(str(TEMPLATES_DIR)),
        autoescape=True,
        undefined=StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        finalize=breakable,
    )
    env.filters.update(
        {
            "money": fmt.money,
            "pct": fmt.pct,
            "pd_pct": fmt.pd_pct,
            "num": fmt.num,
            "years": fmt.years,
            "mn": fmt.in_millions,
            "label": label,
            "by_unit": by_unit,
            "yes_no": lambda v: "yes" if v else "no",
            "or_dash": lambda v: "—" if v in (None, "") else v,
            "times": fmt.times,
            "trend": fmt.trend,
            # A facility id of up to 12 characters prints on one line; a longer one may wrap.
            "id_class": lambda v: "nowrap" if len(str(v)) <= 12 else "text",
        }
    )
    env.globals["SCENARIO_COLUMNS"] = SCENARIO_COLUMNS
    return env


SCENARIO_COLUMNS = 4
"""Scenarios per "side by side" table, beside the base case: six columns of amounts fit any paper."""
LONG_RUN_MIN = 25
LONG_RUN = re.compile(rf"[^\s\u200b]{{{LONG_RUN_MIN},}}")
BREAK_EVERY = 12


def breakable(value: Any) -> Any:
    """Every printed text with a chance to break inside a long word, so that it wraps in its cell.

    A zero-width space goes every 12 characters into each run of 25 or more characters without
    a space, so a 300-character word wraps in its table cell. The stylesheet breaks long words
    only where they overflow (``overflow-wrap: break-word``): ``anywhere`` would let them break
    too, but makes WeasyPrint measure every cell's narrowest width one character at a time,
    which cost 4 s of the sample memo's 7 s layout.

    Parameters
    ----------
    value : Any
        A value a template prints (the environment's ``finalize``).

    Returns
    -------
    Any
        The text with the breaks added; markup (HTML the templates build), numbers and any
        other value as given.
    """
    if not isinstance(value, str) or hasattr(value, "__html__"):
        return value
    if len(value) < LONG_RUN_MIN:
        return value
    return LONG_RUN.sub(_break_run, value)


def _break_run(match: re.Match[str]) -> str:
    run = match.group(0)
    return "\u200b".join(run[i : i + BREAK_EVERY] for i in range(0, len(run), BREAK_EVERY))


def by_unit(value: float | None, unit: str) -> str:
    """A sensitivity input in its own unit (:func:`~obligor_memo.app.present.formatting.input_value`).

    Parameters
    ----------
    value : float | None
        The input's value; None prints as a dash.
    unit : str
        The engine's unit of the input.

    Returns
    -------
    str
        The value as printed, as the sensitivity chart prints it.
    """
    return "—" if value is None else fmt.input_value(value, unit)


def label(code: str | None) -> str:
    """An enumeration value as words: 'senior_unsecured' -> 'senior unsecured'.

    Parameters
    ----------
    code : str | None
        The value; None prints as a dash.

    Returns
    -------
    str
        The value with its underscores as spaces.
    """
    return "—" if code is None else str(code).replace("_", " ")
