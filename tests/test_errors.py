"""Bad input ends in one clear message (file, line, key, suggestion), exit 2, no traceback.

These checks are about the tool's own behaviour; they use no published value.
"""

from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from nogo.cli import main

ROOT = Path(__file__).resolve().parent.parent
FRIENDS = (ROOT / "theories" / "friends-2x2.yaml").read_text()


def run_cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def write(tmp_path, text, name="t.yaml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


CASES = [
    # (description, edit of the shipped file, expected fragments of the message)
    ("unknown assumption in a bundle",
     lambda s: s.replace("[absoluteness, agency-A, agency-B, agency-inner]", "[absoluteness, agency-A, agency-Bx, agency-inner]"),
     [":54", "bundles.local-friendliness", "no assumption named 'agency-Bx'", "did you mean 'agency-B'"]),
    ("misspelled key",
     lambda s: s.replace("    independent: {events: [A, A_in, B_in], of: [B.setting]}",
                         "    independant: {events: [A, A_in, B_in], of: [B.setting]}"),
     [":36", "assumptions.agency-A.independant", "unknown key 'independant'", "did you mean 'independent'"]),
    ("setting that does not exist",
     lambda s: s.replace("A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}", "A_in: {lab: A, outcomes: [+1, -1], read_out_at: 3}"),
     [":26", "read_out_at", "party 'A' has no setting '3'", "'1', '2'"]),
    ("event that does not exist",
     lambda s: s.replace("events: [A, A_in, B_in]", "events: [A, A_inn, B_in]"),
     [":36", "no event named 'A_inn'", "did you mean 'A_in'"]),
    ("outcome that does not exist in a relabelling",
     lambda s: s.replace("A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
                         "A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1, relabel: {+1: +2, -1: -1}}"),
     [":26", "relabel", "not an outcome of 'A'"]),
    ("read-out rules that contradict each other",
     lambda s: s.replace("    B_in: {lab: B,", "    A_in2: {lab: A, outcomes: [+1, -1], read_out_at: 1}\n    B_in: {lab: B,"),
     [":27", "both read out at setting 1"]),
    ("duplicate YAML key",
     lambda s: s.replace("  agency-inner:\n", "  agency-A:\n    absolute: [A_in]\n  agency-inner:\n"),
     [":41", "duplicate key 'agency-A'", "first given on line 33"]),
    ("a file that is not YAML",
     lambda s: "scenario: [unclosed\n  parties: {A\n",
     [":2", "not valid YAML"]),
    ("a setting written without '.setting'",
     lambda s: s.replace("of: [B.setting]}", "of: [B]}", 1),
     [":36", "'B' is not a setting", "write 'B.setting'"]),
]


@pytest.mark.parametrize("desc,edit,fragments", CASES, ids=[c[0] for c in CASES])
def test_bad_theory_gives_one_clear_message(tmp_path, capsys, desc, edit, fragments):
    path = write(tmp_path, edit(FRIENDS))
    code, out, err = run_cli(capsys, "check", path, "local-friendliness", "CHSH")
    assert code == 2
    assert "Traceback" not in err and out == ""
    assert err.count("\n") == 1 and err.startswith("nogo: error: ")
    assert path in err
    for frag in fragments:
        assert frag in err, (frag, err)


@pytest.mark.parametrize("expr,fragments", [
    ("<A1 B1> + <A1 B2> <= two", ["bound must be a number", "two"]),
    ("<A1 B3> <= 1", ["party 'B' has no setting '3'"]),
    ("p(+1 +2|1 1) <= 1", ["party 'B' has no outcome '+2'"]),
    ("<A1 B1> + <A2 B2>", ["exactly one '<=' or '>='"]),
    ("CHHS", ["neither a catalog entry", "did you mean 'CHSH'"]),
])
def test_bad_inequality_gives_one_clear_message(capsys, expr, fragments):
    code, out, err = run_cli(capsys, "check", str(ROOT / "theories" / "friends-2x2.yaml"), "local-friendliness", expr)
    assert code == 2 and "Traceback" not in err
    for frag in fragments:
        assert frag in err, (frag, err)


def test_unknown_bundle_and_missing_file(capsys, tmp_path):
    code, _, err = run_cli(capsys, "check", str(ROOT / "theories" / "friends-2x2.yaml"), "local-friendlyness", "CHSH")
    assert code == 2 and "did you mean 'local-friendliness'" in err
    code, _, err = run_cli(capsys, "check", str(tmp_path / "nope.yaml"), "x", "CHSH")
    assert code == 2 and "no such file" in err


def test_exit_status_and_json(capsys):
    import json

    code, out, _ = run_cli(capsys, "check", str(ROOT / "theories" / "bell-2x2.yaml"), "no-signalling", "CHSH", "--json")
    d = json.loads(out)
    # Popescu & Rohrlich (1994): no-signalling reaches 4 > 2.
    assert code == 1 and d["verdict"] == "not implied" and d["maximum"] == "4"
    assert d["counterexample"]["value"] == "4"
    code, out, _ = run_cli(capsys, "check", str(ROOT / "theories" / "bell-2x2.yaml"), "Bell-local", "CHSH", "--json")
    d = json.loads(out)
    # CHSH (1969): local bound 2.
    assert code == 0 and d["verdict"] == "implied" and d["maximum"] == "2"
    assert d["certificate"]["bound"] == "2" and d["certificate"]["rows"]


# -- property test: random damage never produces a traceback or a silent wrong answer --
_lines = FRIENDS.splitlines(keepends=True)


@st.composite
def damaged(draw):
    text = list(_lines)
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(st.sampled_from(["drop", "swap", "dup", "mutate", "insert"]))
        i = draw(st.integers(0, len(text) - 1))
        if kind == "drop":
            del text[i]
        elif kind == "swap":
            j = draw(st.integers(0, len(text) - 1))
            text[i], text[j] = text[j], text[i]
        elif kind == "dup":
            text.insert(i, text[i])
        elif kind == "insert":
            text.insert(i, draw(st.sampled_from(["  foo: bar\n", "- x\n", "::\n", "    absolute: [Q]\n", "\t\n",
                                                 "    independent: {events: [A], of: [A.setting]}\n"])))
        else:
            line = text[i]
            if line.strip():
                k = draw(st.integers(0, max(0, len(line) - 2)))
                ch = draw(st.sampled_from(list("[]{}:,-+ 0129xAB_@*'\"")))
                text[i] = line[:k] + ch + line[k + 1:]
        if not text:
            text = ["\n"]
    return "".join(text)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(damaged())
def test_damaged_declarations_never_crash(tmp_path, capsys, text):
    path = write(tmp_path, text, "d.yaml")
    code, out, err = run_cli(capsys, "check", path, "local-friendliness", "CHSH", "--json")
    assert code in (0, 1, 2)
    assert "internal error" not in err and "Traceback" not in err
    if code == 2:
        assert err.startswith("nogo: error: ")
    else:
        import json

        d = json.loads(out)
        assert d["verdict"] in ("implied", "not implied")
