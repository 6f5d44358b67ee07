import os
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(Path(__file__).resolve().parent))  # plantgen for tests and bench

# Settings the user keeps (workpack.toml in the config folder, WORKPACK_* variables) must
# not change what the tests see: an empty config folder, no variables, for every process.
from workpack.settings import SETTINGS  # noqa: E402

for _setting in SETTINGS:
    os.environ.pop(_setting.environment, None)
os.environ["XDG_CONFIG_HOME"] = tempfile.mkdtemp(prefix="workpack-test-config-")

import pytest  # noqa: E402

from workpack.loading import load_plant  # noqa: E402
from workpack.topology import Topology  # noqa: E402


@pytest.fixture(scope="session")
def demo_vessel() -> Topology:
    return load_plant(ROOT / "plants" / "demo-vessel.yaml")[1]


@pytest.fixture(scope="session")
def demo_site() -> Topology:
    return load_plant(ROOT / "plants" / "demo-site.yaml")[1]


@pytest.fixture(scope="session")
def demo_plan(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """The demo vessel's day planned once (``plan … --crew-hours 40``), for every test that
    only reads the packages: copy the folder before changing anything in it (checked)."""
    from workpack.cli import main

    out = tmp_path_factory.mktemp("demo-plan") / "out"
    assert main(["plan", str(ROOT / "plants" / "demo-vessel.yaml"),
                 str(ROOT / "plants" / "demo-vessel-findings.yaml"), "--out", str(out),
                 "--crew-hours", "40"]) == 0
    issued = {p.name: p.read_bytes() for p in out.iterdir()}
    yield out
    assert {p.name: p.read_bytes() for p in out.iterdir()} == issued, (
        "a test changed the shared demo plan; it must work on a copy")


@pytest.fixture(scope="session")
def standards() -> dict:
    from workpack.electrical import available_code_sets, load_code_set

    return {name: load_code_set(name) for name in available_code_sets()}


# A real PostgreSQL server for the records store tests, started once when first needed.
from pgfixtures import pg_fresh_url, pg_server, pg_store_url, pg_template  # noqa: E402, F401
