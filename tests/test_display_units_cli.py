"""Display units per quantity: CLI options and the person's saved settings (docs/numbers.md)."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from steelyard.core.display import UnitChoice
from steelyard.core.errors import SteelyardError
from steelyard.io.user_settings import load_choice, save_choice, settings_path
from support.cli import one_line_error, run_cli
from support.paths import FIXTURES
from support.sigfig import sig_text

TRAINER = FIXTURES / "trainer.toml"


def test_mass_and_length_flags_change_the_printout():
    code, out, err = run_cli("rollup", TRAINER, "--mass-unit", "g", "--length-unit", "mm")
    assert code == 0, err
    assert "mass [g]" in out and "[mm]" in out and "mass [lb]" not in out


def test_unknown_display_unit_is_one_line_and_exit_2():
    code, _, err = run_cli("rollup", TRAINER, "--mass-unit", "stone")
    line = one_line_error(code, err, "--mass-unit")
    assert "stone" in line


def test_settings_round_trip(tmp_path, monkeypatch):
    monkeypatch.setenv("STEELYARD_SETTINGS", str(tmp_path / "cfg" / "settings.toml"))
    assert settings_path() == tmp_path / "cfg" / "settings.toml"
    assert load_choice() == UnitChoice()  # no file: the file's own units
    choice = UnitChoice(system="si", mass="g", length="mm", inertia="slug*ft**2")
    save_choice(choice)
    assert load_choice() == choice


@pytest.mark.parametrize("text, field", [('[display]\nmass = "stone"\n', "display.mass"),
                                         ('[display]\nunits = "metric"\n', "display.units"),
                                         ('[display]\ncolour = "red"\n', "display"),
                                         ('[display\n', "")])
def test_bad_settings_name_the_file(tmp_path, monkeypatch, text, field):
    path = tmp_path / "settings.toml"
    path.write_text(text)
    monkeypatch.setenv("STEELYARD_SETTINGS", str(path))
    with pytest.raises(SteelyardError) as exc:
        load_choice()
    assert str(path) in str(exc.value) and field in str(exc.value)


def test_saved_settings_apply_to_the_cli_and_flags_win(tmp_path):
    path = tmp_path / "settings.toml"
    path.write_text('[display]\nunits = "si"\nmass = "g"\n')
    env = {**os.environ, "STEELYARD_SETTINGS": str(path), "PYTHONPATH": os.pathsep.join(sys.path)}

    def rollup(*extra):
        p = subprocess.run([sys.executable, "-m", "steelyard", "rollup", str(TRAINER), *extra], env=env,
                           capture_output=True, text=True)
        assert p.returncode == 0, p.stderr
        return p.stdout

    assert "mass [g]" in rollup() and "[m]" in rollup()
    assert "mass [lb]" in rollup("--units", "file")  # --units sets the saved per-quantity units aside
    assert "mass [oz]" in rollup("--mass-unit", "oz")


def test_the_35_g_part_reads_35_g():
    # the case: a 35 g part printed as 0.04 kg. 35 g = 0.035 kg exactly (SI prefixes)
    from steelyard.core.display import DisplayUnits
    from steelyard.core.document.model import FileUnits

    assert DisplayUnits.choose(FileUnits(), UnitChoice(mass="g")).mass_text(0.035) == "35 g"
    assert DisplayUnits.choose(FileUnits(), UnitChoice(mass="kg")).mass_text(0.035) == "0.035 kg"
    assert sig_text(0.035) == "0.035"
