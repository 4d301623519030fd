"""The Python examples in README.md and DEVELOPERS.md run as written.

Every fenced block that opens with ```` ```python ```` is extracted (also when indented
inside a list item; the fence's indentation is removed). A block is skipped when the
last non-blank line before its fence is exactly ``<!-- not-run -->``.

Execution model (chosen so that documents can build an example up step by step, as a
reader in a notebook would): the blocks of one document run in file order in one fresh
namespace, in a separate Python process whose working directory is a temporary
directory, so that files an example writes land there and registrations an example makes
(e.g. a report section) cannot leak into the other tests. A failure names the document
and the line of the block's opening fence.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DOCUMENTS = ["README.md", "DEVELOPERS.md"]
SKIP_MARK = "<!-- not-run -->"

_OPEN = re.compile(r"^(?P<indent>[ \t]*)```python[ \t]*$")
_CLOSE = re.compile(r"^[ \t]*```[ \t]*$")


def extract_blocks(text: str) -> list[dict]:
    """Python blocks of a Markdown text.

    Returns
    -------
    list of dict
        ``line`` (1-based line of the opening fence), ``code`` (dedented source) and
        ``skip`` (marked not-run), in file order.
    """
    lines = text.splitlines()
    blocks = []
    i = 0
    while i < len(lines):
        m = _OPEN.match(lines[i])
        if not m:
            i += 1
            continue
        start = i
        body = []
        i += 1
        while i < len(lines) and not _CLOSE.match(lines[i]):
            body.append(lines[i])
            i += 1
        if i == len(lines):
            raise ValueError(f"python block opened at line {start + 1} is never closed")
        prev = next((ln.strip() for ln in reversed(lines[:start]) if ln.strip()), "")
        code = textwrap.dedent("\n".join(body))
        blocks.append({"line": start + 1, "code": code + "\n", "skip": prev == SKIP_MARK})
        i += 1
    return blocks


_RUNNER = r"""
import json, sys, traceback
blocks = json.loads(sys.stdin.read())
namespace = {"__name__": "__main__"}
for b in blocks:
    try:
        exec(compile(b["code"], f"{b['doc']}:{b['line']}", "exec"), namespace)
    except BaseException:
        print(f"{b['doc']}: the python block at line {b['line']} failed:", file=sys.stderr)
        traceback.print_exc()
        sys.exit(1)
print(f"ran {len(blocks)} block(s)")
"""

# A known fault of the current text, kept visible rather than skipped: the "add a report
# section" example in DEVELOPERS.md registers a section name that already exists and uses
# names it never defines (run_search, make_search_figure, rows). When the example is
# rewritten the marker text disappears and the strict xfail no longer applies.
_KNOWN_BROKEN = {
    "DEVELOPERS.md": (
        "run_search(ctx.study",
        "the add-a-section example registers the existing 'search' section again "
        "(ValueError) and its body uses undefined names (run_search, make_search_figure, "
        "rows)",
    )
}


def _params():
    out = []
    for doc in DOCUMENTS:
        text = (ROOT / doc).read_text(encoding="utf-8")
        marks = []
        broken = _KNOWN_BROKEN.get(doc)
        if broken and broken[0] in text:
            marks.append(pytest.mark.xfail(strict=True, reason=broken[1]))
        out.append(pytest.param(doc, marks=marks, id=doc))
    return out


@pytest.mark.slow  # a fresh interpreter per document, and the examples compute maps
@pytest.mark.parametrize("doc", _params())
def test_python_blocks_run(doc, tmp_path):
    blocks = [
        {**b, "doc": doc}
        for b in extract_blocks((ROOT / doc).read_text(encoding="utf-8"))
        if not b["skip"]
    ]
    if not blocks:
        pytest.skip(f"{doc} has no python block to run")
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    proc = subprocess.run(
        [sys.executable, "-c", _RUNNER],
        input=json.dumps(blocks),
        capture_output=True,
        text=True,
        cwd=tmp_path,
        env=env,
        timeout=900,
    )
    assert proc.returncode == 0, proc.stderr[-4000:]
    assert proc.stdout.strip().endswith(f"ran {len(blocks)} block(s)")


def test_readme_has_a_python_example():
    # the quick-start promises a Python API example; the test above must not pass vacuously
    blocks = extract_blocks((ROOT / "README.md").read_text(encoding="utf-8"))
    assert any(not b["skip"] for b in blocks)


def test_extractor_reads_fences_indentation_and_the_skip_mark():
    text = "\n".join(
        [
            "intro",
            "```python",
            "a = 1",
            "```",
            "```bash",
            "echo no",
            "```",
            "1. a list item:",
            "",
            "   ```python",
            "   if a:",
            "       b = 2",
            "   ```",
            SKIP_MARK,
            "",
            "```python",
            "raise SystemExit('must not run')",
            "```",
        ]
    )
    blocks = extract_blocks(text)
    assert [b["line"] for b in blocks] == [2, 10, 16]
    assert blocks[0]["code"] == "a = 1\n"
    assert blocks[1]["code"] == "if a:\n    b = 2\n"
    assert [b["skip"] for b in blocks] == [False, False, True]
    with pytest.raises(ValueError, match="line 1 is never closed"):
        extract_blocks("```python\nx = 1\n")
