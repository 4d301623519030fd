"""The study-file reference is written from the schemas that validate the files: the
committed docs/study-file.md is the generated text, every key has a description, and the
ranges the reference states for roadmap studies are the ones the parser enforces."""

from __future__ import annotations

from pathlib import Path

import pytest

from gapmatch.cli import main
from gapmatch.errors import InputError
from gapmatch.roadmap import parse_roadmap
from gapmatch.roadmap.schema import roadmap_schema
from gapmatch.schema import Num, walk
from gapmatch.study import STUDY_SCHEMA
from gapmatch.study_reference import study_reference

ROOT = Path(__file__).resolve().parents[1]
DOC = ROOT / "docs" / "study-file.md"


def test_committed_reference_is_the_generated_text():
    # regenerate with: gapmatch study-keys --markdown > docs/study-file.md
    assert DOC.read_text(encoding="utf-8") == study_reference(markdown=True)


@pytest.mark.parametrize("schema", [STUDY_SCHEMA, roadmap_schema()], ids=["study", "roadmap"])
def test_every_table_and_key_has_a_description(schema):
    missing = [kp for kp, f in walk(schema) if not f.doc.strip()]
    assert missing == []


@pytest.mark.parametrize("markdown", [False, True])
def test_every_key_is_in_the_reference(markdown):
    text = study_reference(markdown=markdown)
    for kp, f in walk(STUDY_SCHEMA):
        if kp.endswith("[]"):
            assert f"[[{kp[:-2]}]]" in text, kp
        elif hasattr(f, "fields"):
            assert f"[{kp}]" in text, kp
        else:
            key = kp.rsplit(".", 1)[-1]
            assert (f"| `{key}` |" if markdown else f"\n  {key}") in text, kp
    for section in ("[site]", "[search]", "[thickness]", "[[materials]]", "[roadmap]"):
        assert section in text
    # units, defaults, ranges and examples of one key, as a check on the columns
    if markdown:
        line = next(x for x in text.splitlines() if "`step_eV`" in x and "grid step" in x)
        assert "| eV |" in line and "`0.01`" in line and "[0.0005, 1]" in line
    else:
        assert "  step_eV [eV]: number, default 0.01\n      allowed: [0.0005, 1]\n" in text
    assert "ere = [0.01, 0.001]" in text


def test_cli_prints_the_reference(capsys):
    assert main(["study-keys"]) == 0
    assert capsys.readouterr().out == study_reference()
    assert main(["study-keys", "--markdown"]) == 0
    assert capsys.readouterr().out == DOC.read_text(encoding="utf-8")


def test_readme_and_report_help_point_to_the_reference(capsys):
    assert "docs/study-file.md" in (ROOT / "README.md").read_text(encoding="utf-8")
    with pytest.raises(SystemExit):
        main(["report", "--help"])
    assert "docs/study-file.md" in capsys.readouterr().out.replace("\n", " ")


_ROADMAP = """
[roadmap]
name = "s"
milestones = [2030]

[[candidates]]
name = "GaAs on Si"
materials = ["GaAs", "Si"]
connection = "independent"
"""


def _roadmap_with(table: str, key: str, value: float) -> str:
    text = _ROADMAP
    if table == "roadmap":
        return text.replace("[roadmap]\n", f"[roadmap]\n{key} = {value!r}\n")
    return text + f"\n[{table}]\n{key} = {value!r}\n"


_NUMERIC = [
    (kp, f)
    for kp, f in walk(roadmap_schema())
    if kp.count(".") == 1
    and kp.split(".")[0] in ("roadmap", "conditions", "search")
    and hasattr(f, "low")
    and not isinstance(getattr(f, "item", None), Num)
]


@pytest.mark.parametrize("kp, f", _NUMERIC, ids=[kp for kp, _ in _NUMERIC])
def test_roadmap_ranges_in_the_reference_are_enforced(kp, f):
    table, key = kp.split(".")
    integer = not isinstance(f, Num)
    step = 1 if integer else max(abs(f.high), 1.0) * 1e-6
    parse_roadmap(_roadmap_with(table, key, f.high))  # the documented bound is accepted
    with pytest.raises(InputError) as exc:
        parse_roadmap(_roadmap_with(table, key, f.high + step))
    assert exc.value.field == kp
    low_ok = f.low if not getattr(f, "low_open", False) else f.low + step
    parse_roadmap(_roadmap_with(table, key, low_ok))
    with pytest.raises(InputError) as exc:
        parse_roadmap(
            _roadmap_with(table, key, f.low - step if not getattr(f, "low_open", False) else f.low)
        )
    assert exc.value.field == kp
