"""The command line as one surface: units in option names, examples in --help, --json, --force, BOM, 'demo'."""

import json

import pytest

from stillhook.cli import COMMANDS, build_parser, main
from stillhook.project import demo_project_text


@pytest.mark.parametrize("name", COMMANDS)
def test_every_help_ends_with_examples_and_offers_json(name, capsys):
    with pytest.raises(SystemExit):
        main([name, "--help"])
    text = capsys.readouterr().out
    examples = text.split("examples:\n")[-1].strip().splitlines()
    assert 1 <= len(examples) <= 2 and all(e.strip().startswith(f"stillhook {name}") for e in examples)
    assert "--json" in text


def test_quantity_options_carry_units():
    # every float option is named with its unit, like the project keys (the rule); counts are plain
    units = ("-kg", "-m", "-hz", "-s", "-pct", "-db", "-ratio", "-m-s2", "-rad", "-n")
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    for name, p in sub.choices.items():
        for action in p._actions:
            if action.type is float:
                flag = max(action.option_strings, key=len)
                assert flag.endswith(units), f"stillhook {name} {flag} has no unit in its name"


def test_utf8_file_with_byte_order_mark_is_read(tmp_path, capsys):
    p = tmp_path / "bom.toml"
    p.write_bytes(b"\xef\xbb\xbf" + demo_project_text().encode("utf-8"))
    assert main(["modes", str(p), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["rig"]["hook_mass_kg"] == 340.0


def test_a_file_named_demo_is_not_silently_shadowed(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "demo").write_text(demo_project_text().replace("hook_mass_kg = 340.0", "hook_mass_kg = 200.0"))
    assert main(["modes", "demo", "--json"]) == 0
    cap = capsys.readouterr()
    assert "built-in demo" in cap.err and "./demo" in cap.err
    assert json.loads(cap.out)["rig"]["hook_mass_kg"] == 340.0
    assert main(["modes", "./demo", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["rig"]["hook_mass_kg"] == 200.0


def test_emit_refuses_a_users_folder_and_force_replaces_its_own(tmp_path, capsys):
    out = tmp_path / "c"
    out.mkdir()
    (out / "manifest.json").write_text("mine")
    assert main(["emit", "demo", "--out", str(out)]) == 2
    assert "not empty" in capsys.readouterr().err and (out / "manifest.json").read_text() == "mine"
    fresh = tmp_path / "fresh"
    assert main(["emit", "demo", "--out", str(fresh), "--json"]) == 0
    first = (fresh / "manifest.json").read_bytes()
    capsys.readouterr()
    assert main(["emit", "demo", "--out", str(fresh)]) == 2
    assert "--force" in capsys.readouterr().err
    assert main(["emit", "demo", "--out", str(fresh), "--force", "--json"]) == 0
    assert (fresh / "manifest.json").read_bytes() == first


def test_out_folder_is_checked_before_any_work(tmp_path, capsys):
    blocker = tmp_path / "file"
    blocker.write_text("x")
    # a sweep-sized job would take seconds; the refusal comes first and names the folder
    assert main(["report", "demo", "--out", str(blocker / "sub")]) == 2
    assert str(blocker / "sub") in capsys.readouterr().err
