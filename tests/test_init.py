"""``gapmatch init``: every template writes a study file that validates and runs."""

from __future__ import annotations

import pytest

from gapmatch.cli import main
from gapmatch.cli.init import TEMPLATES, template_text, write_template
from gapmatch.errors import InputError
from gapmatch.study import load_study


@pytest.mark.parametrize("name", sorted(TEMPLATES))
def test_template_validates(tmp_path, name):
    path = write_template(tmp_path / f"My Study {name}", name)
    assert path.suffix == ".toml"
    study = load_study(path)
    # the study is named after the file, made safe for a report file name
    assert study.name == f"My-Study-{name}"
    assert "fictional" in template_text(name)


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(TEMPLATES))
def test_template_report_runs_as_written(tmp_path, name, capsys):
    path = write_template(tmp_path / "s.toml", name)
    assert main(["report", str(path), "--out-dir", str(tmp_path / "out"), "--quiet"]) == 0
    assert (tmp_path / "out" / "s.html").stat().st_size > 10_000


def test_init_cli_refuses_to_overwrite(tmp_path, capsys):
    p = tmp_path / "a.toml"
    assert main(["init", str(p)]) == 0
    assert "gapmatch report" in capsys.readouterr().out
    assert main(["init", str(p)]) == 2
    assert "exists already" in capsys.readouterr().err
    assert main(["init", str(p), "--force", "--template", "space-triple"]) == 0
    assert "AM0" in p.read_text()


def test_unknown_template_suggests(tmp_path):
    with pytest.raises(InputError, match=r"did you mean 'space-triple'"):
        write_template(tmp_path / "x.toml", "space-tripel")
