"""Tests of the parts catalogue: bundled data, fits, lookups, user overrides, rejection."""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest

from optimiser.parts import catalogue as parts
from optimiser.parts.catalogue import (
    CapacitorSeries,
    CatalogueError,
    Diode,
    MissingRating,
    PartNotFound,
    Valve,
    e_series,
    find_part,
    load_catalogue,
)

KINDS = list(parts.KINDS)

# Boltzmann constant and elementary charge, exact in the 2019 SI.
# Source: CODATA 2018 / SI Brochure, 9th ed. (2019), defining constants.
K_BOLTZMANN = 1.380649e-23
Q_ELECTRON = 1.602176634e-19


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


# ---------------------------------------------------------------- bundled data


@pytest.mark.parametrize("kind", KINDS)
def test_every_bundled_entry_loads_and_has_provenance(kind):
    catalogue = load_catalogue(kind)
    assert len(catalogue) >= 5
    for name, part in catalogue.items():
        assert part.name == name
        assert part.provenance.strip()


@pytest.mark.parametrize("kind", ["valve", "diode"])
def test_recalled_ratings_say_so(kind):
    # Nothing in these files was read off an open data sheet (see the files' headers).
    for part in load_catalogue(kind).values():
        assert "from memory — verify" in part.provenance, part.name


@pytest.mark.parametrize("kind", ["capacitor", "choke", "resistor"])
def test_generic_entries_are_marked_invented(kind):
    for part in load_catalogue(kind).values():
        assert "invented generic entry" in part.provenance, part.name


def test_valve_catalogue_covers_the_common_types():
    # Common practice, no source: the rectifiers amp builders reach for first.
    for name in ["5U4G", "5U4GB", "5AR4", "GZ34", "5Y3GT", "5V4G", "EZ81", "6CA4", "6X4", "5R4GY"]:
        assert isinstance(find_part("valve", name), Valve)


def test_valve_piv_covers_full_wave_no_load_inverse_voltage():
    # Derived: in a centre-tapped full-wave rectifier at no load the idle plate sees the
    # reservoir at +V_pk while its own half-winding is at −V_pk: 2·√2·V_rms.
    for valve in load_catalogue("valve").values():
        if valve.max_plate_voltage_rms is not None:
            assert valve.max_piv >= 2 * math.sqrt(2) * valve.max_plate_voltage_rms, valve.name


def test_electrolytic_surge_ratio():
    # Source: IEC 60384-4, surge voltage ≈ 1.15·U_R up to 315 V and ≈ 1.1·U_R above,
    # as makers round it — from memory — verify.
    for series in load_catalogue("capacitor").values():
        for r in series.voltage_ratings:
            ratio = r.surge / r.rated
            if series.technology == "aluminium_electrolytic":
                assert 1.09 <= ratio <= 1.21, (series.name, r.rated)
            else:
                assert ratio == 1.0


# ---------------------------------------------------------------- valve physics


def test_perveance_child_langmuir_by_hand():
    valve = find_part("valve", "GZ34")
    # Source: Child–Langmuir law I = K·V^1.5, so K = I / V^1.5 from one point; the point is
    # the 5AR4/GZ34 tube drop 17 V at 250 mA (Mullard GZ34 / Sylvania 5AR4 data sheets,
    # from memory — verify). By hand: 17^1.5 = 17·√17 = 17 × 4.1231056 = 70.092796;
    # 0.250 / 70.092796 = 3.5667e-3 A/V^1.5.
    assert valve.perveance == pytest.approx(3.5667e-3, rel=1e-4)


def test_perveance_needs_a_drop_point():
    valve = find_part("valve", "EZ81")
    assert valve.drop_at_current is None
    with pytest.raises(MissingRating, match="EZ81.*drop_at_current"):
        valve.perveance


def test_min_plate_impedance_interpolates_the_table():
    valve = find_part("valve", "5U4GB")
    # Source: table points 300 V → 21 ohm, 400 V → 67 ohm, 450 V → 97 ohm (RCA 5U4GB data
    # sheet, from memory — verify); linear interpolation by hand: 350 V → (21 + 67)/2 = 44 ohm.
    assert valve.min_plate_impedance_at(350.0) == pytest.approx(44.0)
    assert valve.min_plate_impedance_at(400.0) == pytest.approx(67.0)
    # Below the table the lowest figure is kept.
    assert valve.min_plate_impedance_at(200.0) == pytest.approx(21.0)
    # Above it the last segment (slope 30 ohm per 50 V) is extended: 500 V → 97 + 30 = 127.
    assert valve.min_plate_impedance_at(500.0) == pytest.approx(127.0)


def test_min_plate_impedance_vector_equals_scalar_calls():
    valve = find_part("valve", "5AR4")
    volts = np.array([[250.0, 325.0], [475.0, 600.0]])
    vector = valve.min_plate_impedance_at(volts)
    assert vector.shape == volts.shape
    scalar = [[valve.min_plate_impedance_at(float(v)) for v in row] for row in volts]
    np.testing.assert_allclose(vector, scalar)


def test_single_point_impedance_is_flat_and_missing_is_an_error():
    assert find_part("valve", "5U4G").min_plate_impedance_at([300.0, 450.0]).tolist() == [75.0, 75.0]
    with pytest.raises(MissingRating, match="6X5GT"):
        find_part("valve", "6X5GT").min_plate_impedance_at(300.0)


# ---------------------------------------------------------------- diode fit


def _shockley_forward_voltage(diode: Diode, current: float) -> float:
    # Source: Shockley diode equation with series resistance (SPICE diode model parameters
    # IS, N, RS), at 25 °C: V = N·(kT/q)·ln(1 + I/IS) + I·RS.
    thermal_voltage = K_BOLTZMANN * 298.15 / Q_ELECTRON
    return (
        diode.emission_coefficient * thermal_voltage * math.log1p(current / diode.saturation_current)
        + current * diode.series_resistance
    )


def test_1n4007_forward_voltage_fit_meets_data_sheet():
    diode = find_part("diode", "1n4007")
    # Source: 1N4001–1N4007 data sheets (onsemi, Vishay, Diodes Inc.): V_F max 1.1 V at
    # I_F = 1.0 A, 25 °C — from memory — verify.
    vf = _shockley_forward_voltage(diode, 1.0)
    assert vf <= 1.1 * (1 + 5e-4)
    assert vf == pytest.approx(1.1, rel=5e-3)


@pytest.mark.parametrize("name", sorted(load_catalogue("diode")))
def test_every_diode_fit_meets_its_stated_forward_voltage(name):
    diode = find_part("diode", name)
    stated = diode.forward_voltage
    vf = _shockley_forward_voltage(diode, stated.current)
    # The fit is anchored at the stated figure to 3 significant figures of IS.
    assert vf == pytest.approx(stated.voltage, rel=5e-3)
    if stated.kind == "max":
        assert vf <= stated.voltage * (1 + 5e-4)
    # The bundled figures are all stated at the rated average current.
    assert stated.current == pytest.approx(diode.i_f_avg)


# ---------------------------------------------------------------- preferred numbers


def test_e12_is_the_iec_60063_series():
    # Source: IEC 60063:2015, Table 1 (E12).
    iec_e12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
    assert e_series("E12", 0).tolist() == iec_e12


def test_e6_and_e24_are_the_iec_60063_series():
    # Source: IEC 60063:2015, Table 1 (E6, E24).
    assert e_series("E6", 0).tolist() == [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
    assert e_series("e24", 0).tolist() == [
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
    ]


def test_e_series_in_si_over_decades_without_float_noise():
    values = e_series("E12", range(-6, -3))
    assert len(values) == 36
    assert values[0] == 1.0e-6 and values[-1] == 8.2e-4
    assert 2.2e-4 in values.tolist()  # not 2.2 * 1e-4 == 0.00022000000000000003
    assert np.all(np.diff(values) > 0)


def test_e_series_rejects_unknown_series():
    with pytest.raises(ValueError, match="E48.*allowed: E3, E6, E12, E24"):
        e_series("E48", 0)


# ---------------------------------------------------------------- capacitors, resistors


def test_capacitor_esr_from_tan_delta_by_hand():
    series = find_part("capacitor", "generic-105C-snap-in")
    assert isinstance(series, CapacitorSeries)
    # Source: IEC 60384-4 loss angle, ESR = tan δ / (2π f C). By hand: 2π × 120 Hz × 100 uF
    # = 0.0753982 S; 0.15 / 0.0753982 = 1.98944 ohm (tan δ = 0.15 is the data file's figure).
    assert series.esr(100e-6) == pytest.approx(1.98944, rel=1e-5)
    # The 500 V grade carries its own tan δ of 0.20: 0.20 / 0.0753982 = 2.65258 ohm.
    assert series.esr(100e-6, rated_voltage=500.0) == pytest.approx(2.65258, rel=1e-5)


def test_capacitor_values_follow_the_series_range():
    series = find_part("capacitor", "85C-radial")
    values = series.values(450.0)
    # E6 from 1 uF to 220 uF: 1, 1.5, 2.2, 3.3, 4.7, 6.8 uF, then ×10, then 100, 150, 220 uF.
    assert len(values) == 15
    assert values[0] == 1e-6 and values[-1] == 220e-6
    with pytest.raises(MissingRating, match="600 V"):
        series.values(600.0)


def test_ripple_and_cost_models_rise_with_size():
    series = find_part("capacitor", "generic-105C-snap-in")
    c = np.array([47e-6, 100e-6, 220e-6])
    # At the model's reference point the rating is the reference current (data file).
    assert series.ripple_rating(100e-6, 450.0) == pytest.approx(1.0)
    assert np.all(np.diff(series.ripple_rating(c, 450.0)) > 0)
    assert np.all(np.diff(series.cost(c, 450.0)) > 0)


def test_resistor_linear_derating():
    resistor = find_part("resistor", "generic-MF-0.5W")
    # Derating 70 °C → 155 °C from the data file; half-way (112.5 °C) gives half power by hand.
    assert resistor.power_at(25.0) == pytest.approx(0.5)
    assert resistor.power_at(112.5) == pytest.approx(0.25)
    assert resistor.power_at(200.0) == 0.0


# ---------------------------------------------------------------- lookups and user files


def test_lookup_by_name_or_alias_ignores_case():
    assert find_part("valve", "gz34") is find_part("valve", "5AR4")
    assert find_part("valves", " 6ca4 ").name == "EZ81"


def test_missing_part_names_close_matches():
    with pytest.raises(PartNotFound, match=r"no valve named '5AR5'.*close matches: .*5AR4") as info:
        find_part("valve", "5AR5")
    assert isinstance(info.value, LookupError)


def test_unknown_kind_is_rejected():
    with pytest.raises(ValueError, match="unknown part kind 'transistor'; allowed: valve"):
        load_catalogue("transistor")


def test_user_file_overrides_an_entry(tmp_path):
    path = _write(
        tmp_path,
        "my_valves.yaml",
        """\
        kind: valve
        entries:
          - name: GZ34
            heating: indirect
            cathode_tied_to_heater: true
            heater_voltage: "5.0 V"
            heater_current: "1.9 A"
            max_piv: "1400 V"
            max_peak_current: "700 mA"
            max_dc_current: "200 mA"
            drop_at_current: {voltage: "20 V", current: "250 mA"}
            provenance: invented test entry
        """,
    )
    bundled_count = len(load_catalogue("valve"))
    merged = load_catalogue("valve", extra_files=[path])
    assert len(merged) == bundled_count  # replaced 5AR4 (alias GZ34), did not add
    assert "5AR4" not in merged and merged["GZ34"].max_dc_current == pytest.approx(0.2)
    assert find_part("valve", "gz34", extra_files=[path]).max_piv == pytest.approx(1400.0)
    # The old alias went with the replaced entry.
    with pytest.raises(PartNotFound):
        find_part("valve", "5AR4", extra_files=[path])
    # The bundled catalogue is untouched.
    assert find_part("valve", "GZ34").name == "5AR4"


def test_user_file_adds_an_entry(tmp_path):
    path = _write(
        tmp_path,
        "extra.yaml",
        """\
        entries:
          - name: generic-7H-250mA
            inductance: "7 H"
            dc_resistance: "90 ohm"
            rated_current: "250 mA"
            mass: "2.5 kg"
            cost: 18
            provenance: invented test entry
        """,
    )
    merged = load_catalogue("choke", extra_files=[path])
    assert len(merged) == len(load_catalogue("choke")) + 1
    assert merged["generic-7H-250mA"].inductance == pytest.approx(7.0)


def test_entry_without_provenance_is_rejected(tmp_path):
    path = _write(
        tmp_path,
        "bad.yaml",
        """\
        kind: diode
        entries:
          - name: MYDIODE
            v_rrm: "1000 V"
            i_f_avg: "1 A"
            i_fsm: "30 A"
            i_fsm_duration: "8.3 ms"
            reverse_recovery: {kind: standard}
            forward_voltage: {voltage: "1.1 V", current: "1 A", kind: max}
            saturation_current: "1e-10 A"
            emission_coefficient: 1.8
            series_resistance: "0.05 ohm"
        """,
    )
    with pytest.raises(CatalogueError, match=r"bad\.yaml:3: diode entry 0 \('MYDIODE'\) has no provenance"):
        load_catalogue("diode", extra_files=[path])


def test_blank_provenance_is_rejected(tmp_path):
    path = _write(
        tmp_path,
        "blank.yaml",
        """\
        kind: resistor
        entries:
          - name: R1
            provenance: "  "
        """,
    )
    with pytest.raises(CatalogueError, match=r"blank\.yaml:3: resistor entry 0 \('R1'\) has no provenance"):
        load_catalogue("resistor", extra_files=[path])


def test_unknown_field_and_bad_unit_are_rejected_with_the_entry_named(tmp_path):
    unknown = _write(
        tmp_path,
        "unknown.yaml",
        """\
        kind: choke
        entries:
          - name: C1
            inductance: "5 H"
            dc_resistance: "100 ohm"
            rated_current: "100 mA"
            mass: "1 kg"
            cost: 5
            colour: green
            provenance: invented test entry
        """,
    )
    with pytest.raises(CatalogueError, match=r"unknown\.yaml:3: choke entry 0 \('C1'\): colour: unknown field"):
        load_catalogue("choke", extra_files=[unknown])
    bad_unit = _write(
        tmp_path,
        "unit.yaml",
        """\
        kind: choke
        entries:
          - name: C2
            inductance: "5 h"
            dc_resistance: "100 ohm"
            rated_current: "100 mA"
            mass: "1 kg"
            cost: 5
            provenance: invented test entry
        """,
    )
    with pytest.raises(CatalogueError, match=r"C2.*inductance.*'h' is hours"):
        load_catalogue("choke", extra_files=[bad_unit])


def test_wrong_kind_and_duplicate_keys_are_rejected(tmp_path):
    wrong = _write(tmp_path, "wrong.yaml", "kind: valve\nentries: []\n")
    with pytest.raises(CatalogueError, match="holds kind 'valve', but 'diode' parts were asked for"):
        load_catalogue("diode", extra_files=[wrong])
    dup = _write(tmp_path, "dup.yaml", "kind: choke\nentries:\n  - name: A\n    name: B\n")
    with pytest.raises(CatalogueError, match=r"dup\.yaml:4:5: entries\.0\.name: duplicate key"):
        load_catalogue("choke", extra_files=[dup])


def test_clashing_names_within_one_file_are_rejected(tmp_path):
    entry = """\
          - name: {name}
            aliases: [{alias}]
            inductance: "5 H"
            dc_resistance: "100 ohm"
            rated_current: "100 mA"
            mass: "1 kg"
            cost: 5
            provenance: invented test entry
    """
    text = "kind: choke\nentries:\n" + textwrap.dedent(entry.format(name="A", alias="X")) + textwrap.dedent(
        entry.format(name="B", alias="x")
    )
    path = tmp_path / "clash.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(CatalogueError, match=r"'B' reuses the name or alias of \['A'\]"):
        load_catalogue("choke", extra_files=[path])


def test_bundled_files_are_cached():
    first = load_catalogue("diode")
    second = load_catalogue("diode")
    assert first == second and first is not second  # fresh dicts ...
    assert first["1N4007"] is second["1N4007"]  # ... over the same parsed models
    assert parts._bundled.cache_info().hits >= 1


def test_a_design_file_brings_its_own_parts(tmp_path):
    # Invented user part: a rectifier valve of the user's own, named in the design's parts_files
    from optimiser.parts import catalogue as parts_module
    from optimiser.assessment.full import assess

    (tmp_path / "my-valves.yaml").write_text(
        "kind: valve\n"
        "entries:\n"
        "  - name: XR-9\n"
        "    heating: direct\n"
        "    heater_voltage: 5 V\n"
        "    heater_current: 2 A\n"
        "    max_piv: 1400 V\n"
        "    max_peak_current: 600 mA\n"
        "    max_dc_current: 200 mA\n"
        "    drop_at_current: {voltage: 40 V, current: 200 mA}\n"
        "    provenance: invented test part\n")
    design = tmp_path / "d.yaml"
    design.write_text(
        "parts_files: [my-valves.yaml]\n"
        "mains: {voltage: 230 V, frequency: 50 Hz}\n"
        "transformer: {secondary_voltage: 300 V, secondary_resistance: 100 ohm}\n"
        "rectifier: {topology: centre-tap, valve: XR-9}\n"
        "nodes:\n"
        "  - {name: b1, capacitance: 40 uF, bleeder: 220 kohm, load: {current: 100 mA}}\n")
    try:
        a = assess(design, detail=False)
        piv = next(c for c in a.checks if c.name == "valve.piv")
        assert piv.limit == 1400.0 and "invented test part" in piv.source
    finally:
        parts_module.use_user_files(())
    with pytest.raises(PartNotFound, match="XR-9"):
        parts_module.find_part("valve", "XR-9")
