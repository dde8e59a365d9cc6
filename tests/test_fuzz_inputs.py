"""Property-based tests: whatever a user feeds the readers, the answer is a DesignError or a value.

Over 2,000 (3 x 700) generated design and spec files (mutated valid files, random unit strings in every
field, random YAML, random bytes) are read and validated; any exception other than the
documented :class:`~optimiser.formats.yamlfile.DesignError` fails, and so does any file that
takes more than 5 s (hypothesis' deadline). Only reading and validation run here, not the physics.
"""

from __future__ import annotations

import re
import tempfile
from pathlib import Path

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from optimiser.formats.units import DIMENSIONS, UnitError, parse_quantity
from optimiser.formats.yamlfile import DesignError
from optimiser.inputs.design import load_design
from optimiser.inputs.spec import load_spec

SPECS = Path(__file__).resolve().parent.parent / "specs"
DESIGNS = sorted(SPECS.glob("demo-design-*.yaml"))
SPEC_FILES = [SPECS / "demo-valve.yaml", SPECS / "demo-silicon.yaml"]
TEXTS = {p.name: p.read_text(encoding="utf-8") for p in DESIGNS + SPEC_FILES}

FUZZ = settings(max_examples=700, deadline=5000, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

_folder = Path(tempfile.mkdtemp(prefix="railwright-fuzz-"))


def read(name: str, payload: bytes | str):
    """Read ``payload`` as the kind of file ``name`` is; DesignError is the only allowed failure."""
    path = _folder / ("design.yaml" if name.startswith("demo-design") else "spec.yaml")
    path.write_bytes(payload if isinstance(payload, bytes) else payload.encode("utf-8"))
    loader = load_design if name.startswith("demo-design") else load_spec
    try:
        loader(str(path))
    except DesignError as exc:
        assert exc.problems and all(isinstance(p, str) and p and "\n" not in p
                                    for p in exc.problems), exc.problems


unit_text = st.one_of(
    st.text(max_size=30),
    st.builds(lambda n, p, u: f"{n} {p}{u}",
              st.one_of(st.integers(-10**12, 10**12), st.floats(allow_nan=True, allow_infinity=True)),
              st.sampled_from(["", "k", "M", "m", "u", "µ", "n", "p", "G"]),
              st.sampled_from(["V", "A", "ohm", "Ω", "F", "H", "Hz", "s", "W", "T", "degC", "K",
                               "%", "h", "k", "A/mm^2", "kg", "m", "dB", "V/s", "lol"])),
    st.floats(allow_nan=True, allow_infinity=True), st.integers(), st.booleans(), st.none(),
)

_VALUE = re.compile(r"(?<=: )([^{}\[\],#\n]+?)(?=\s*(?:[,}\]#\n]))")


@FUZZ
@given(st.sampled_from(sorted(TEXTS)), st.data())
def test_mutated_valid_files_give_values_or_design_errors(name, data):
    """Valid files with values replaced by random unit strings, lines dropped, repeated, or
    re-indented, and characters inserted."""
    lines = TEXTS[name].splitlines(keepends=True)
    for _ in range(data.draw(st.integers(1, 4))):
        k = data.draw(st.integers(0, len(lines) - 1))
        action = data.draw(st.sampled_from(["value", "value", "drop", "repeat", "indent", "insert"]))
        line = lines[k]
        if action == "value":
            spots = list(_VALUE.finditer(line))
            if spots:
                m = data.draw(st.sampled_from(spots))
                new = data.draw(unit_text)
                shown = yaml.safe_dump(new, default_flow_style=True, width=10**6).strip()
                shown = shown.removesuffix("...").strip()
                line = line[:m.start()] + shown + line[m.end():]
        elif action == "drop":
            line = ""
        elif action == "repeat":
            line = line + line
        elif action == "indent":
            line = " " * data.draw(st.integers(0, 6)) + line.lstrip(" ")
        else:
            at = data.draw(st.integers(0, len(line)))
            line = line[:at] + data.draw(st.text(max_size=5)) + line[at:]
        lines[k] = line
    read(name, "".join(lines))


yaml_values = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(), st.floats(), st.text(max_size=12),
              unit_text),
    lambda inner: st.one_of(st.lists(inner, max_size=4),
                            st.dictionaries(st.one_of(st.text(max_size=10),
                                                      st.sampled_from(["mains", "nodes",
                                                                       "rectifier", "transformer",
                                                                       "conditions", "voltage",
                                                                       "frequency", "load",
                                                                       "feed", "choices"])),
                                            inner, max_size=5)),
    max_leaves=20)


@FUZZ
@given(st.sampled_from(["demo-design-bridge.yaml", "demo-valve.yaml"]), st.data())
def test_random_yaml_and_sections_give_values_or_design_errors(name, data):
    """Random YAML documents, and valid files with one section replaced by random YAML."""
    if data.draw(st.booleans()):
        document = data.draw(yaml_values)
    else:
        document = yaml.safe_load(TEXTS[name])
        section = data.draw(st.sampled_from(sorted(document)))
        document[section] = data.draw(yaml_values)
    read(name, yaml.safe_dump(document, allow_unicode=True))


@FUZZ
@given(st.sampled_from(sorted(TEXTS)), st.binary(max_size=300), st.integers(0, 4000),
       st.sampled_from(["utf-8", "utf-16", "latin-1", "utf-32"]))
def test_bytes_and_encodings_give_design_errors(name, garbage, at, encoding):
    """Random bytes spliced into a file, and whole files in other encodings."""
    raw = TEXTS[name].replace("Linnet", "Linnét").encode(encoding, errors="replace")
    at = min(at, len(raw))
    read(name, raw[:at] + garbage + raw[at:])


@settings(max_examples=500, deadline=1000, derandomize=True, database=None)
@given(unit_text, st.sampled_from(sorted(DIMENSIONS)))
def test_random_unit_strings_parse_or_raise_unit_error(text, dimension):
    try:
        value = parse_quantity(text, dimension)
    except UnitError:
        return
    assert isinstance(value, float)
