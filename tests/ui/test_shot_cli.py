"""``fourfold shot`` through the command line: it says what it wrote (the project's own promise
that a headless command reports its outputs; no outside source)."""

from fourfold import cli


def test_shot_prints_the_file_it_wrote(qtbot, tmp_path, capsys):
    output = tmp_path / "window.png"
    assert cli.main(["shot", "-o", str(output), "--size", "900x600"]) == 0
    assert capsys.readouterr().out.strip() == f"wrote {output}"
    assert output.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
