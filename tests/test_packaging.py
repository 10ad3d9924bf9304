"""The installed, non-editable wheel carries the grammar and finds it outside the checkout."""
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def wheel(tmp_path_factory):
    pytest.importorskip("hatchling")
    out = tmp_path_factory.mktemp("wheel")
    subprocess.run([sys.executable, "-m", "pip", "wheel", str(ROOT), "--no-deps",
                    "--no-build-isolation", "-q", "-w", str(out)], check=True)
    return next(out.glob("permq-*.whl"))


def test_wheel_contains_the_grammar(wheel):
    names = zipfile.ZipFile(wheel).namelist()
    assert "permq/_grammar/permq.lark" in names
    text = zipfile.ZipFile(wheel).read("permq/_grammar/permq.lark").decode()
    assert text == (ROOT / "grammar" / "permq.lark").read_text()


def test_wheel_contains_the_results_schema(wheel):
    name = "permq/contract/results.schema.json"
    assert name in zipfile.ZipFile(wheel).namelist()
    text = zipfile.ZipFile(wheel).read(name).decode()
    assert text == (ROOT / "permq" / "contract" / "results.schema.json").read_text()


def test_installed_wheel_parses_and_runs_outside_the_checkout(wheel, tmp_path):
    target = tmp_path / "site"
    subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target",
                    str(target), str(wheel)], check=True)
    code = ("import permq, permq.syntax.grammar as g;"
            "assert 'site' in permq.__file__, permq.__file__;"
            "r = permq.run('compare [1.5, 2.5, 3.5] vs [4.5, 5.5, 6.5, 7.5]')[0];"
            "print(r.outcome.p_value)")
    env = {"PYTHONPATH": str(target), "PATH": "/usr/bin:/bin"}
    done = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, env=env,
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    # 3 + 4 values, complete separation: the two-sided exact p is 2 / C(7, 3) = 2/35
    assert abs(float(done.stdout) - 2 / 35) < 1e-12
    schema = subprocess.run([sys.executable, "-m", "permq", "schema"], cwd=tmp_path, env=env,
                            capture_output=True, text=True)
    assert schema.returncode == 0 and '"title": "permq results"' in schema.stdout
