"""The README's Python API example runs as written (so the documentation cannot rot)."""
import os
import re

from helpers import ROOT


def test_the_readme_python_example_runs(capsys):
    text = (ROOT / "README.md").read_text()
    section = text[text.index("### Python API"):]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    here = os.getcwd()
    os.chdir(ROOT)                       # the example uses paths relative to the repository
    try:
        exec(compile(code, "README.md", "exec"), {})
    finally:
        os.chdir(here)
    out = capsys.readouterr().out.splitlines()
    assert out[0].split()[:3] == ["21", "True", "complete"]
    assert out[-1] == "12 12"
