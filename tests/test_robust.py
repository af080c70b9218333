"""Nothing makes nogo lie, crash or lose data (issue 14): names, sizes, YAML, interrupts, writes.

Every case below is one of the reported holes; each must give a clean
one-line InputError (exit 2) or the right answer.  These checks are about
the tool's own behaviour, except where a published value is named beside
the check.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from nogo.cli import main
from nogo.errors import InputError, ModelTooLarge
from nogo.sizes import estimate_linear, guard_bundle
from nogo.theory import load_theory, load_theory_text
from nogo.yamlread import read_yaml_text

ROOT = Path(__file__).resolve().parent.parent
FRIENDS = (ROOT / "theories" / "friends-2x2.yaml").read_text()
BELL = (ROOT / "theories" / "bell-2x2.yaml").read_text()


def run_cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def clean_error(code, err):
    assert code == 2, err
    assert "internal error" not in err and "Traceback" not in err
    assert err.startswith("nogo: error: ") and err.count("\n") == 1, err


# -- item 4: safe YAML ---------------------------------------------------------------------
@pytest.mark.parametrize("value,fragment", [
    ("!!int abc", "not a valid !!int"),
    ("!!bool abc", "not a valid !!bool"),
    ("!!timestamp abc", "not a valid !!timestamp"),
    ("!!float abc", "not a valid !!float"),
    ("!!map abc", "asks for a mapping"),
    ("!!seq abc", "asks for a list"),
    ("!!str [1, 2]", "asks for a single value"),
    ("!!pairs [a: 1, b: 2]", "!!pairs"),
    ("!!omap [a: 1]", "!!omap"),
    ("!!set {a, b}", "!!set"),
    ("!!binary QUJD", "!!binary"),
    ("!custom x", "the tag !custom"),
])
def test_explicit_tags_are_plain_scalars_only(value, fragment):
    text = f"title: x\nsays: y\nother: {value}\n"
    with pytest.raises(InputError) as e:
        read_yaml_text(text, "t.yaml")
    assert fragment in e.value.message
    assert e.value.where.line == 3


def test_tagged_values_under_bundles_are_refused_cleanly(tmp_path, capsys):
    for tag in ("!!pairs", "!!omap"):
        text = BELL.replace("bundles:\n", f"bundles: {tag}\n", 1)
        p = tmp_path / "t.yaml"
        p.write_text(text)
        code, out, err = run_cli(capsys, "check", str(p), "Bell-local", "CHSH")
        clean_error(code, err)
        assert tag in err


def test_alias_expansion_is_bounded_and_the_message_short():
    # 721-byte-style bomb: ten aliases of ten aliases ... under 'says'
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    for k in range(1, 8):
        lines.append(f"a{k}: &a{k} [" + ", ".join([f"*a{k - 1}"] * 10) + "]")
    text = "\n".join(lines) + "\nsays: *a7\n"
    assert len(text) < 1000
    t0 = time.monotonic()
    with pytest.raises(InputError) as e:
        read_yaml_text(text, "bomb.yaml")
    assert time.monotonic() - t0 < 2
    assert "aliases" in e.value.message and len(str(e.value)) < 400


def test_a_few_aliases_are_fine():
    data = read_yaml_text("base: &o [+1, -1]\nA: {outcomes: *o}\nB: {outcomes: *o}\n")
    assert data["A"]["outcomes"] == data["B"]["outcomes"] == [1, -1]


def test_setting_list_blown_up_by_aliases_gives_a_short_message(tmp_path, capsys):
    lines = ["x0: &x0 [1, 2, 3, 4, 5, 6, 7, 8]"] + [f"x{k}: &x{k} [" + ", ".join([f"*x{k - 1}"] * 8) + "]"
                                                   for k in range(1, 7)]
    text = BELL.replace("scenario:", "\n".join(lines) + "\nscenario:", 1).replace("settings: [1, 2]", "settings: *x6", 1)
    p = tmp_path / "t.yaml"
    p.write_text(text)
    code, out, err = run_cli(capsys, "check", str(p), "Bell-local", "CHSH")
    clean_error(code, err)
    assert len(err) < 500


def test_nesting_is_bounded():
    with pytest.raises(InputError) as e:
        read_yaml_text("a: " + "[" * 200 + "]" * 200)
    assert "nested" in e.value.message
    read_yaml_text("a: " + "[" * 30 + "]" * 30)  # moderate nesting is fine


def test_keys_that_are_not_names_are_refused():
    with pytest.raises(InputError) as e:
        read_yaml_text("parties:\n  True: 1\n  'True': 2\n")
    assert "boolean" in e.value.message and e.value.where.line == 2
    with pytest.raises(InputError) as e:
        read_yaml_text("{true: 0, 1: 1}")
    assert "boolean" in e.value.message and "duplicate" not in e.value.message
    with pytest.raises(InputError) as e:
        read_yaml_text("? [1, 2]\n: x\n")
    assert "not a list" in e.value.message


# -- item 1: one namespace ------------------------------------------------------------------
def test_an_observer_named_like_a_latent_outcome_is_refused(capsys, tmp_path):
    # the reported wrong verdict: inner observer "A@2" collided with the latent outcome A@2
    text = FRIENDS.replace("A_in", '"A@2"')
    p = tmp_path / "t.yaml"
    p.write_text(text)
    code, out, err = run_cli(capsys, "check", str(p), "local-friendliness", "CHSH")
    clean_error(code, err)
    assert "'A@2'" in err and "'@'" in err and ":26" in err


@pytest.mark.parametrize("name", ["A@2", "x*y", "a+b", "a|b", "a<b", "a>b", "a b", "a,b", "1abc"])
def test_reserved_characters_are_refused_in_every_kind_of_name(name):
    for old in ("agency-inner", "local-friendliness", "A_in"):
        text = FRIENDS.replace(old, f'"{name}"')
        with pytest.raises(InputError) as e:
            load_theory_text(text, "t.yaml")
        assert "cannot be used" in e.value.message or "read as" in e.value.message, e.value.message
        assert e.value.where.line is not None


@pytest.mark.parametrize("edit,first,second", [
    (lambda s: s.replace("    B_in: {lab: B,", "    A: {lab: B,").replace("[A, A_in, B_in]", "[A, A_in]"), "party",
     "inner observer"),
    (lambda s: s.replace("  local-friendliness:", "  absoluteness:", 1), "assumption", "bundle"),
])
def test_one_namespace_for_events_and_one_for_declarations(edit, first, second):
    with pytest.raises(InputError) as e:
        load_theory_text(edit(FRIENDS), "t.yaml")
    msg = e.value.message
    assert f"the {first} (line" in msg and f"this {second}" in msg, msg
    assert e.value.where.line is not None


def test_a_hidden_variable_cannot_share_a_name():
    text = (ROOT / "theories" / "hidden-2x2.yaml").read_text().replace("hidden: lam", "hidden: A")
    with pytest.raises(InputError) as e:
        load_theory_text(text, "t.yaml")
    assert "'A' names both the party" in e.value.message and "hidden variable" in e.value.message


def test_two_parties_named_true_are_impossible():
    text = BELL.replace("    A: {", "    True: {").replace("    B: {", "    'True': {")
    with pytest.raises(InputError):
        load_theory_text(text, "t.yaml")


def test_boolean_in_relabel_is_an_input_error():
    text = FRIENDS.replace("A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
                           "A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1, relabel: {+1: true, -1: -1}}")
    with pytest.raises(InputError) as e:
        load_theory_text(text, "t.yaml")
    assert "relabel" in e.value.message


# -- item 3: size guards ----------------------------------------------------------------------
def _big_theory(n_parties: int, n_settings: int, counterfactual: bool) -> str:
    names = [chr(65 + i) for i in range(n_parties)]
    out = ["scenario:", "  parties:"]
    out += [f"    {p}: {{settings: [{', '.join(str(i + 1) for i in range(n_settings))}], outcomes: [+1, -1]}}"
            for p in names]
    out.append("assumptions:")
    for p in names:
        others = ", ".join(q for q in names if q != p)
        out.append(f"  ns-{p}:\n    independent: {{events: [{others}], of: [{p}.setting]}}")
    out.append(f"  cf:\n    counterfactual: [{', '.join(names)}]")
    out.append("bundles:")
    out.append(f"  no-signalling: [{', '.join('ns-' + p for p in names)}]")
    out.append(f"  Bell-local: [cf, {', '.join('ns-' + p for p in names)}]")
    return "\n".join(out) + "\n"


@pytest.fixture
def no_compile(monkeypatch):
    """Fail if a linear model is built: a refusal must come from the estimate alone."""
    import nogo.compile as compile_mod

    def refuse(*a, **k):
        raise AssertionError("compile_linear was called before the size guard refused")

    monkeypatch.setattr(compile_mod, "compile_linear", refuse)


def test_twelve_parties_are_refused_from_the_declaration(tmp_path, capsys, no_compile):
    p = tmp_path / "t.yaml"
    p.write_text(_big_theory(12, 2, False))
    t0 = time.monotonic()
    code, out, err = run_cli(capsys, "check", str(p), "no-signalling", "<A1 B1> <= 1")
    assert time.monotonic() - t0 < 10  # acceptance: under 2 s; generous here for a loaded machine
    clean_error(code, err)
    assert "12 parties" in err and "--max-columns" in err


def test_counterfactual_bundle_with_twelve_settings_names_the_assumption(tmp_path, capsys, no_compile):
    p = tmp_path / "t.yaml"
    p.write_text(_big_theory(2, 12, True))
    code, out, err = run_cli(capsys, "check", str(p), "Bell-local", "CHSH")
    clean_error(code, err)
    assert "assumption 'cf' (counterfactual)" in err and "12 settings" in err and "--max-columns" in err
    assert "columns" in err and "rows" in err and ("GB" in err or "TB" in err)


def test_show_refuses_a_huge_bundle_and_still_describes_the_rest(tmp_path, capsys):
    p = tmp_path / "t.yaml"
    p.write_text(_big_theory(2, 100, True))
    code, out, err = run_cli(capsys, "show", str(p))
    assert code == 0, err
    assert "Bell-local" in out and "would have" in out and "limit" in out


def test_the_limit_can_be_raised():
    th = load_theory_text(_big_theory(2, 3, True), "t.yaml")
    with pytest.raises(ModelTooLarge):
        guard_bundle(th, "Bell-local", max_columns=100)
    assert guard_bundle(th, "Bell-local", max_columns=1000).columns == 576


def test_check_reads_the_inequality_before_compiling(capsys, monkeypatch):
    import nogo.compile

    def refuse(*a, **k):
        raise AssertionError("compiled before the inequality was read")

    monkeypatch.setattr(nogo.compile, "compile_bundle", refuse)  # the command imports it inside run()
    code, out, err = run_cli(capsys, "check", str(ROOT / "theories" / "bell-2x2.yaml"), "Bell-local", "<A1 B1> <= 1/0")
    clean_error(code, err)


def test_estimates_equal_the_compiled_models_of_the_shipped_theories():
    from nogo.compile import NotLinear, compile_linear

    n = 0
    for path in sorted((ROOT / "theories").glob("*.yaml")):
        th = load_theory(path)
        for b in th.bundles:
            try:
                m = compile_linear(th, b)
            except NotLinear:
                continue
            except InputError as exc:
                if "supports only" in str(exc):  # possibilistic-only bundles have no linear model
                    continue
                raise
            est = estimate_linear(th.scenario, th.resolve(b)[1])
            assert est.columns == m.shape[1], (path.name, b)
            assert est.rows >= m.shape[0]  # rows: an upper bound (empty rows are skipped when built)
            n += 1
    assert n >= 20


def test_npa_level_out_of_reach_is_refused_before_listing_words():
    from nogo.quantum.npa import level_words

    sc = load_theory(ROOT / "theories" / "bell-2x3.yaml").scenario
    t0 = time.monotonic()
    with pytest.raises(ModelTooLarge) as e:
        level_words(sc, "12")
    assert time.monotonic() - t0 < 2
    assert "level 12" in e.value.message
    assert len(level_words(sc, "2")) == 28  # 1 + 6 + 21 moments (2 parties x 3 settings, CG projectors)


# -- item 6: interrupts and writes; --version ---------------------------------------------------
def test_version(capsys):
    code, out, err = run_cli(capsys, "--version")
    assert code == 0 and out.startswith("nogo ") and out.strip() != "nogo unknown"


def test_keyboard_interrupt_in_a_command_exits_130(capsys, monkeypatch):
    import nogo.check

    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr(nogo.check, "decide", interrupted)  # the command imports it inside run()
    code, out, err = run_cli(capsys, "check", str(ROOT / "theories" / "bell-2x2.yaml"), "Bell-local", "CHSH")
    assert code == 130 and err == "nogo: interrupted\n"


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_ctrl_c_at_any_moment_is_quiet(tmp_path):
    """SIGINT at several moments (imports, compile, derivation): exit 130, 'nogo: interrupted', no traceback.

    Before Python hands control to nogo (the interpreter's own start-up and
    the site-packages hooks, a few tens of milliseconds) an interrupt is the
    interpreter's to report; such a report is recognised and allowed.
    """
    env = dict(os.environ, NOGO_CACHE=str(tmp_path / "cache"), PYTHONPATH=str(ROOT))
    args = [sys.executable, "-m", "nogo", "facets", str(ROOT / "theories" / "friends-2x3.yaml"), "local-friendliness"]
    handled = 0
    for delay in (0.15, 0.4, 0.8, 1.5, 3.0):
        p = subprocess.Popen(args, cwd=tmp_path, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        time.sleep(delay)
        p.send_signal(signal.SIGINT)
        out, err = p.communicate(timeout=60)
        err = err.decode()
        frames = [line for line in err.splitlines() if line.strip().startswith("File ")]
        if "Traceback" in err and not any("/nogo/" in f for f in frames):
            continue  # the interpreter was still starting (site hooks, runpy): no nogo code had run yet
        if p.returncode == 0:
            continue  # finished before the signal
        assert p.returncode == 130, (delay, err)
        lines = err.strip().splitlines()  # progress lines (plain, off a terminal) may come first
        assert "Traceback" not in err and lines[-1] == "nogo: interrupted", (delay, err)
        assert all(line.startswith("nogo: ") for line in lines), (delay, err)
        handled += 1
    assert handled >= 2, "too few interrupts reached nogo to say anything"
    assert not list(tmp_path.glob("*.part")), "no half-written file may stay behind"


def test_a_failed_export_leaves_the_old_file_intact(tmp_path, capsys, monkeypatch):
    out = tmp_path / "facets.csv"
    out.write_text("old contents\n")

    def full_disk(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", full_disk)
    code, stdout, err = run_cli(capsys, "facets", str(ROOT / "theories" / "bell-2x2.yaml"), "no-signalling",
                                "--format", "csv", "--out", str(out), "--no-cache")
    clean_error(code, err)
    assert str(out) in err and "No space left on device" in err
    assert out.read_text() == "old contents\n"
    assert [p.name for p in tmp_path.iterdir()] == ["facets.csv"]
