"""The session of docs/python.md runs as written (from the repository root): every statement executes,
and the one shown raising ValueError raises it with the message shown. The printed numbers are not compared
(they are the demo's; the map tests compare numbers with the CLI)."""
import builtins
import os
import re

import pytest

from conftest import SOURCE


def _session():
    text = open(os.path.join(SOURCE, "docs", "python.md")).read()
    block = text[text.index("## A session on the demo cube"):]
    block = block[block.index("```python") + len("```python"):]
    block = block[:block.index("```")]
    statements, current = [], None
    for line in block.splitlines():
        if line.startswith(">>> "):
            if current:
                statements.append(current)
            current = {"code": line[4:], "error": None}
        elif line.startswith("... ") and current:
            current["code"] += "\n" + line[4:]
        elif current and re.match(r"^\w+Error: ", line):
            current["error"] = line
    if current:
        statements.append(current)
    return statements


def test_the_documented_session_runs(monkeypatch):
    monkeypatch.chdir(SOURCE)
    statements = _session()
    assert len(statements) > 15
    namespace = {}
    for s in statements:
        code = compile(s["code"], "docs/python.md", "single" if "\n" not in s["code"] else "exec")
        if s["error"]:
            kind, message = s["error"].split(": ", 1)
            with pytest.raises(getattr(builtins, kind)) as e:
                exec(code, namespace)
            assert str(e.value) == message
        else:
            exec(code, namespace)
