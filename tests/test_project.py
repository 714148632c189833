"""The project's promises about itself: README commands, CI, cautions (no outside source)."""

import re
from pathlib import Path

import fourfold

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _readme_commands() -> list[str]:
    return re.findall(r"```\n(.+?)\n```", README)


def test_readme_opens_with_the_job_then_two_commands():
    first_block = README.index("```")
    assert "A/B test" in README[:first_block]
    install_and_open, install_and_test = _readme_commands()[:2]
    assert install_and_open.startswith("python3 -m venv .venv && ")
    assert "pip install -e ." in install_and_open
    assert install_and_open.endswith(".venv/bin/fourfold")
    assert "pytest" in install_and_test


def test_readme_commands_install_into_a_virtual_environment():
    """A stock Debian/Ubuntu Python refuses pip outside a virtual environment (PEP 668,
    "externally-managed-environment"): each command makes one and uses only its programs."""
    for command in _readme_commands()[:2]:
        steps = command.split(" && ")
        assert steps[0] == "python3 -m venv .venv"
        assert all(step.startswith(".venv/bin/") for step in steps[1:]), command


def test_ci_runs_exactly_the_readme_test_command():
    ci_lines = (ROOT / ".ci" / "run").read_text(encoding="utf-8").strip().splitlines()
    assert ci_lines[-1] == _readme_commands()[1]


def test_readme_carries_the_cautions():
    assert " ".join(fourfold.CAUTION.split()) in " ".join(README.split())


def test_sample_plan_is_bundled():
    assert (ROOT / "samples" / "quillmoss-checkout.json").is_file()


MAX_MODULE_LINES = 600
"""No module over 600 lines: a module that grows past it is split by what it holds."""


def _long_modules(package: Path) -> list[str]:
    return sorted(
        f"{path.relative_to(ROOT)}: {lines} lines"
        for path in package.rglob("*.py")
        if (lines := len(path.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES
    )


def test_no_module_is_over_600_lines():
    assert _long_modules(ROOT / "desktop" / "fourfold") == []
