"""Progress bars: drawn by tqdm on a terminal, nothing at all anywhere else."""

from __future__ import annotations

import io
import subprocess
import sys
from pathlib import Path

from workpack.cli import main
from workpack.progress import Progress

ROOT = Path(__file__).resolve().parent.parent


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_a_terminal_sees_the_count_and_the_stage() -> None:
    screen = Terminal()
    planning = Progress("planning", stream=screen)
    for done in (1, 2, 3):
        planning(done, 3)
    assert "planning" in screen.getvalue() and "3/3" in screen.getvalue()
    screen = Terminal()
    with Progress("audit", total=2, stream=screen) as audit:
        audit.stage("reading packages")
        audit.stage("PDF")
    assert "PDF" in screen.getvalue() and "2/2" in screen.getvalue()


def test_nothing_is_drawn_and_tqdm_not_loaded_off_a_terminal() -> None:
    quiet = io.StringIO()
    with Progress("rendering", total=2, stream=quiet) as rendering:
        rendering(1, 2)
        rendering.stage("x")
    assert quiet.getvalue() == ""
    probe = ("import io, sys\nfrom workpack.progress import Progress\n"
             "with Progress('x', total=1, stream=io.StringIO()) as p:\n    p(1, 1)\n"
             "print('tqdm' in sys.modules)")
    result = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                            check=True)
    assert result.stdout.strip() == "False"


def test_import_assets_reports_its_stages_and_stays_quiet_when_piped(tmp_path,
                                                                      capsys) -> None:
    sheet = tmp_path / "assets.xlsx"
    assert main(["export", "--what", "assets", "--plant",
                 str(ROOT / "plants" / "demo-site.yaml"), "--out", str(sheet)]) == 0
    capsys.readouterr()
    from workpack.sheets import import_assets
    from workpack.shipped import asset_map

    stages: list[str] = []
    import_assets([sheet], asset_map(), "x.yaml", stage=stages.append)
    assert stages == ["reading", "mapping", "checking"]
    assert main(["import-assets", str(sheet), "--out", str(tmp_path / "back.yaml")]) == 0
    assert capsys.readouterr().err == ""  # stderr is not a terminal here: no bar
