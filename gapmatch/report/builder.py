"""The self-contained HTML page: one copy of plotly.js, every figure, print CSS.

:func:`build_report` runs the selected sections of a study (progress per section on
stderr) and returns a :class:`Report` held in memory; :func:`write_report` then writes
every file of the report into a temporary folder beside the target and moves the
finished set into place (data files first, the page last), so that an error while
computing or writing leaves the previous report untouched and no temporary file behind.
Every file of one set carries the same set id (``report_set`` in the summary, a
``<meta>`` in the page), so a reader can tell which set a page belongs to.
:func:`check_output_dir` tells, before anything is computed, whether the target folder
can be written.
"""

from __future__ import annotations

import json
import os
import shutil
import sys
import tempfile
import time
import uuid
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

import pandas as pd
import plotly.graph_objects as go
import plotly.io as pio
from plotly.offline import get_plotlyjs

from ..errors import InputError
from ..io.atomic import write_atomic
from ..io.csv_fast import frame_csv
from ..study import Study
from .context import ReportContext
from .html import esc
from .registry import SECTIONS, SectionOutput, check_section_names
from .style import REPORT_CAUTION, finish_figure, slug, title_text
from .summary_box import build_summary_box

__all__ = ["Report", "build_report", "write_report", "render_page", "check_output_dir"]

_CSS = """
:root{--ink:#1f2a30;--paper:#fbfaf6;--sand:#f4f1ea;--rule:#c9c2b4;--accent:#0f5e63;
--accent2:#b35a00;--muted:#5b6770}
*{box-sizing:border-box}
body{margin:0;background:var(--paper);color:var(--ink);
font:15px/1.5 "Source Sans 3","Segoe UI",Helvetica,Arial,sans-serif}
header.gm-head{background:var(--accent);color:#fff;padding:28px 6vw 22px;
border-bottom:6px solid var(--accent2)}
header.gm-head h1{margin:0 0 6px;font-size:28px;font-weight:600;letter-spacing:.2px}
header.gm-head .gm-meta{opacity:.9;font-size:14px}
header.gm-head .gm-brand{font-size:12px;letter-spacing:2px;text-transform:uppercase;opacity:.8}
nav.gm-toc{padding:10px 6vw;background:var(--sand);border-bottom:1px solid var(--rule);
font-size:14px}
nav.gm-toc{display:flex;flex-wrap:wrap;gap:4px 16px}
nav.gm-toc a{color:var(--accent);text-decoration:none}
aside.gm-answer{border:2px solid var(--accent);background:#fff;padding:6px 18px 4px;
margin:16px 0 10px;max-width:1000px}
aside.gm-answer h2{margin-top:6px}
aside.gm-answer p{max-width:900px}
.gm-small{font-size:13px;color:var(--muted)}
.gm-warn{border-left:5px solid #b00020;background:#fdecee;padding:4px 16px;margin:8px 0}
.gm-note{border-left:5px solid var(--accent2);background:#fff6ea;padding:6px 14px}
.gm-table-wrap{max-width:100%;overflow-x:auto}
main{padding:8px 6vw 30px;max-width:1250px}
main p,main li{overflow-wrap:anywhere}
section.gm-section{margin:26px 0 34px;border-top:1px solid var(--rule);padding-top:8px}
h2{font-size:21px;color:var(--accent);margin:10px 0 8px;font-weight:600}
h2 .gm-num{color:var(--accent2);margin-right:8px}
h3{font-size:16px;margin:14px 0 6px}
.gm-figure{width:100%;min-height:300px;margin:10px 0 18px;background:#fff;
border:1px solid #e2dccf}
table.gm-table{border-collapse:collapse;margin:10px 0 16px;font-size:14px;background:#fff}
table.gm-table caption{text-align:left;font-weight:600;padding:4px 0;color:var(--muted)}
table.gm-table th,table.gm-table td{border-bottom:1px solid #e2dccf;padding:5px 10px;
text-align:left;vertical-align:top}
table.gm-table th{background:var(--sand);font-weight:600}
table.gm-table .num{text-align:right;font-variant-numeric:tabular-nums}
.gm-caution{border-left:5px solid var(--accent2);background:#fff6ea;padding:4px 16px;margin:12px 0}
.gm-lead{font-size:16px;max-width:900px}
footer.gm-foot{font-size:12.5px;color:var(--muted);padding:18px 6vw 30px;
border-top:1px solid var(--rule);background:var(--sand)}
footer.gm-foot code{font-size:12px;word-break:break-all}
.gm-files a{color:var(--accent)}
#gm-console-errors{display:none}
@media print{
 body{background:#fff;font-size:11pt}
 header.gm-head{background:#fff;color:#000;border-bottom:2pt solid #000;padding:0 0 8pt}
 nav.gm-toc,.gm-files{display:none}
 main{padding:0;max-width:none}
 section.gm-section{break-inside:auto;border-top:1pt solid #999}
 h2{break-after:avoid;color:#000}
 .gm-figure{break-inside:avoid;border:none;width:100%}
 .gm-caution{background:#fff;border-left:3pt solid #000}
 footer.gm-foot{background:#fff}
 a{color:#000}
}
"""

# records script errors and console.error calls into #gm-console-errors so that tools
# (and the browser test) can read them from the DOM; marks rendering progress on <body>
_ERROR_HOOK = """
(function(){
  var errs=[];
  function rec(m){errs.push(String(m));var el=document.getElementById('gm-console-errors');
    if(el){el.textContent=errs.join('\\n');el.setAttribute('data-count',String(errs.length));}}
  window.__gmErrors=errs;
  window.addEventListener('error',function(e){rec('error: '+(e.message||e.type));});
  window.addEventListener('unhandledrejection',function(e){rec('rejection: '+e.reason);});
  var ce=console.error;console.error=function(){rec(Array.prototype.join.call(arguments,' '));
    if(ce){ce.apply(console,arguments);}};
  document.addEventListener('DOMContentLoaded',function(){
    var el=document.getElementById('gm-console-errors');
    if(el&&errs.length){el.textContent=errs.join('\\n');el.setAttribute('data-count',String(errs.length));}
  });
})();
"""

_RENDER = """
(function(){
  var nodes=document.querySelectorAll('script.gm-figure-data');
  var jobs=[];
  nodes.forEach(function(n){
    var spec=JSON.parse(n.textContent);
    var div=document.getElementById(n.getAttribute('data-target'));
    jobs.push(Plotly.newPlot(div,spec.data,spec.layout,spec.config||
      {responsive:true,displaylogo:false,toImageButtonOptions:{format:'svg'}}));
  });
  Promise.all(jobs).then(function(){document.body.setAttribute('data-gm-rendered',
    String(jobs.length));},function(e){console.error('plot failed: '+e);});
  window.addEventListener('beforeprint',function(){
    document.querySelectorAll('.gm-figure').forEach(function(d){Plotly.Plots.resize(d);});});
})();
"""


@dataclass
class Report:
    """A report in memory.

    Attributes
    ----------
    name : str
        Study name (file stem).
    html : str
        The page.
    files : dict
        File name -> content (str) of the data files beside the page.
    summary : dict
        The JSON summary (also in ``files``).
    """

    name: str
    html: str
    files: dict[str, str] = field(default_factory=dict)
    summary: dict = field(default_factory=dict)

    @property
    def size_bytes(self) -> int:
        """Size of the page [bytes]."""
        return len(self.html.encode("utf-8"))


def _json_for_script(fig: go.Figure, config: dict | None = None) -> str:
    text = pio.to_json(fig, validate=False, pretty=False)
    if config is not None:  # the figure's plotly config travels with it
        text = text[:-1] + ',"config":' + json.dumps(config) + "}"
    # inside <script>: no "</script>" or "<!--" can appear once every '<' is escaped
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def render_page(
    study: Study,
    outputs: list[tuple[str, str, SectionOutput]],
    *,
    footer: dict,
    files: list[str],
    answer: str = "",
    report_set: str = "",
) -> str:
    """Assemble the page from section outputs ``(name, title, output)``.

    Every figure goes through :func:`gapmatch.report.style.finish_figure` (the one
    style, a caution in its title, no repeated legend entries, a download file name);
    ``answer`` (safe HTML, the summary box) comes before the first section;
    ``report_set`` is recorded in a ``<meta name="gapmatch-report-set">``.
    """
    parts: list[str] = []
    toc: list[str] = []
    nfig = 0
    for k, (name, title, out) in enumerate(outputs, start=1):
        sid = f"sec-{esc(name)}"
        toc.append(f'<a href="#{sid}">{k}. {esc(title)}</a>')
        body: list[str] = []
        for b in out.blocks:
            if isinstance(b, go.Figure):
                nfig += 1
                fid = f"gm-fig-{nfig}"
                fname = f"{study.name}_{name}_{nfig}_{slug(title_text(b))}"
                config = finish_figure(b, filename=fname)
                body.append(f'<div class="gm-figure" id="{fid}" data-section="{esc(name)}"></div>')
                body.append(
                    f'<script type="application/json" class="gm-figure-data" '
                    f'data-target="{fid}">{_json_for_script(b, config)}</script>'
                )
            elif isinstance(b, str) and b.startswith("<table"):
                body.append(f'<div class="gm-table-wrap">{b}</div>')
            else:
                body.append(str(b))
        parts.append(
            f'<section class="gm-section" id="{sid}"><h2><span class="gm-num">{k}'
            f"</span>{esc(title)}</h2>{''.join(body)}</section>"
        )
    meta = " · ".join(esc(x) for x in (study.author, study.organisation) if x)
    desc = f'<p class="gm-lead">{esc(study.description)}</p>' if study.description else ""
    links = " ".join(f'<a href="{esc(f)}">{esc(f)}</a>' for f in files)
    foot = "".join(f"<div>{esc(k)}: <code>{esc(v)}</code></div>" for k, v in footer.items())
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f'<meta name="generator" content="gapmatch {esc(footer.get("gapmatch version", ""))}">'
        f'<meta name="gapmatch-report-set" content="{esc(report_set)}">'
        f"<title>{esc(study.title)}</title><style>{_CSS}</style>"
        f"<script>{_ERROR_HOOK}</script>"
        f"<script>{get_plotlyjs()}</script></head><body>"
        '<header class="gm-head"><div class="gm-brand">gapmatch · detailed-balance study</div>'
        f'<h1>{esc(study.title)}</h1><div class="gm-meta">{meta}</div></header>'
        f'<nav class="gm-toc" aria-label="contents">{" ".join(toc)}</nav>'
        f"<main>{desc}{answer}"
        '<p class="gm-lead"><strong>Theoretical limits, not ratings.</strong> Every '
        "efficiency below is the detailed-balance ceiling of idealised cells under the "
        "stated assumptions; see the cautions at the end.</p>"
        f'<p class="gm-files">Data files: {links}</p>'
        f"{''.join(parts)}</main>"
        f'<footer class="gm-foot"><h3>Reproducibility</h3>{foot}</footer>'
        '<pre id="gm-console-errors" data-count="0"></pre>'
        f"<script>{_RENDER}</script></body></html>\n"
    )


def _progress_bar(total: int, enabled: bool):
    from tqdm import tqdm

    return tqdm(
        total=total,
        file=sys.stderr,
        disable=not enabled,
        unit="section",
        bar_format="{desc} {n_fmt}/{total_fmt} [{elapsed}]",
        leave=True,
    )


def build_report(
    study: Study, *, command: str = "", progress: bool = True, created: datetime | None = None
) -> Report:
    """Run the study's sections and assemble the page in memory.

    Parameters
    ----------
    study : Study
        A validated study (:func:`gapmatch.study.load_study`).
    command : str
        The command line that made the report (shown in the footer).
    progress : bool
        Show per-section progress on stderr.
    created : datetime, optional
        Creation time for the footer (default: now, UTC).

    Returns
    -------
    Report
    """
    from .. import __version__

    names = check_section_names(study.sections)  # before anything is computed
    ctx = ReportContext(study)
    if "assumptions" not in names:  # the cautions are not optional
        names.append("assumptions")
    outputs = []
    report_set = uuid.uuid4().hex
    summary: dict = {
        "caution": REPORT_CAUTION,
        "report_set": report_set,
        "study": {
            "name": study.name,
            "title": study.title,
            "author": study.author,
            "organisation": study.organisation,
            "sha256": study.sha256,
        },
        "conditions": dict(study.conditions),
        "connections": list(study.connections),
    }
    files: dict[str, str] = {}
    tty = progress and sys.stderr.isatty()
    bar = _progress_bar(len(names), tty)
    try:
        for k, name in enumerate(names, start=1):
            sec = SECTIONS[name]
            bar.set_description_str(f"report {study.name}: {name}")
            t0 = time.perf_counter()
            out = sec.build(ctx)
            outputs.append((name, sec.title, out))
            if out.summary:
                summary[name] = out.summary
            for suffix, obj in out.data.items():
                fname = f"{study.name}_{suffix}"
                if isinstance(obj, pd.DataFrame):
                    files[fname] = frame_csv(obj)
                else:
                    files[fname] = json.dumps(obj, indent=2, default=_jsonable, allow_nan=False)
            bar.update(1)
            if progress and not tty:
                print(
                    f"report {study.name}: [{k}/{len(names)}] {name} "
                    f"({time.perf_counter() - t0:.2f} s)",
                    file=sys.stderr,
                    flush=True,
                )
    finally:
        bar.close()
    created = created or datetime.now(UTC)
    footer = {
        "gapmatch version": __version__,
        "study file": str(study.path) if study.path else "(in memory)",
        "study file SHA-256": study.sha256,
        "created (UTC)": created.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "command": command or "(Python API)",
        "libraries": _library_versions(),
    }
    answer, answer_summary = build_summary_box(ctx, REPORT_CAUTION)
    summary["answer"] = answer_summary
    summary["reproducibility"] = {_key(k): v for k, v in footer.items()}
    sname = f"{study.name}_summary.json"
    summary["files"] = sorted([*files, sname, f"{study.name}.html"])
    files[sname] = json.dumps(summary, indent=2, default=_jsonable, allow_nan=False)
    page = render_page(
        study, outputs, footer=footer, files=sorted(files), answer=answer, report_set=report_set
    )
    return Report(study.name, page, files, summary)


def _key(label: str) -> str:
    """A JSON key of a display label: ``"study file SHA-256"`` -> ``"study_file_sha256"``."""
    k = label.lower().replace("(", "").replace(")", "").replace("-", "")
    return "_".join(k.split())


def _jsonable(o):
    import numpy as np

    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, np.generic):
        return o.item()
    if isinstance(o, tuple):
        return list(o)
    return str(o)


def _library_versions() -> str:
    import numpy
    import plotly
    import scipy

    try:
        import pvlib

        pv = f", pvlib {pvlib.__version__}"
    except ImportError:  # pragma: no cover
        pv = ""
    return (
        f"Python {sys.version.split()[0]}, numpy {numpy.__version__}, scipy "
        f"{scipy.__version__}, plotly {plotly.__version__}{pv}"
    )


def check_output_dir(out_dir: str | Path, field: str = "--out-dir") -> Path:
    """Check that a report can be written to ``out_dir`` (created if missing), before
    anything is computed.

    Raises
    ------
    InputError
        When the folder cannot be created or written (a file in its place, no
        permission, read-only file system), with the reason.
    """
    d = Path(out_dir)
    if d.exists() and not d.is_dir():
        raise InputError(field, "must be a folder; a file of that name exists", str(d))
    try:
        d.mkdir(parents=True, exist_ok=True)
        fd, probe = tempfile.mkstemp(prefix=".gapmatch-write-check.", dir=d)
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        raise InputError(
            field, f"cannot write a report there ({exc.strerror or exc})", str(d)
        ) from None
    return d


def write_report(report: Report, out_dir: str | Path = "reports") -> Path:
    """Write the report's files as one set; returns the page's path.

    Every file is first written into a temporary folder beside the target (same file
    system); only when all are complete are they moved into ``out_dir`` with one
    rename each, data files first and the page last. A failure before that leaves the
    previous report as it was, and the temporary folder is removed in every case.
    """
    d = check_output_dir(out_dir)
    stale = _previous_set(d, report.name)
    tmp = Path(tempfile.mkdtemp(prefix=f".{report.name}.report-", dir=d))
    try:
        names = list(report.files)
        for fname in names:
            write_atomic(tmp / fname, report.files[fname])
        page = f"{report.name}.html"
        write_atomic(tmp / page, report.html)
        for fname in [*names, page]:
            os.replace(tmp / fname, d / fname)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    # files of the previous set that the new one does not have (e.g. a section dropped)
    for fname in stale - {*report.files, page}:
        (d / fname).unlink(missing_ok=True)
    return d / page


def _previous_set(d: Path, name: str) -> set[str]:
    """File names the previous report of study ``name`` in ``d`` lists as its own."""
    try:
        old = json.loads((d / f"{name}_summary.json").read_text(encoding="utf-8"))
        files = old.get("files", [])
    except (OSError, ValueError, AttributeError):
        return set()
    # only plain file names of this study (never a path elsewhere)
    return {
        f for f in files if isinstance(f, str) and f == Path(f).name and f.startswith(f"{name}_")
    }
