"""Tube physics against published values, and the module's own tables against xraydb."""
import numpy as np
import pytest
import xraydb

from models.instruments import tube

# Elam et al. (xraydb) and Bearden & Burr differ by up to 0.02 % on these lines
# (Cu K-alpha1 8046.3 vs 8047.8 eV); 0.05 % leaves room without hiding a wrong line.
XRAYDB_REL_TOL = 5e-4


@pytest.mark.parametrize(
    ("element", "wavelength_angstrom", "energy_kev"),
    [
        ("Cu", 1.54059292, 8.0478),  # ITC Vol. C Table 4.2.2.6
        ("Mo", 0.70931713, 17.4793),  # ITC Vol. C Table 4.2.2.6
        ("Cr", 12.39841857 / 5.4147, 5.4147),  # Bearden & Burr (REFERENCE.md)
        ("Fe", 12.39841857 / 6.4039, 6.4039),  # Bearden & Burr (REFERENCE.md)
        ("Co", 12.39841857 / 6.9303, 6.9303),  # Bearden & Burr (REFERENCE.md)
        ("Ag", 12.39841857 / 22.1629, 22.1629),  # Bearden & Burr (REFERENCE.md)
    ],
)
def test_k_alpha1_published(element, wavelength_angstrom, energy_kev):
    line = tube.anode_lines(element)[0]
    assert line.name == "K-alpha1"
    assert line.wavelength_angstrom == pytest.approx(wavelength_angstrom, rel=1e-9)
    # The keV figures quoted beside the ITC wavelengths are rounded to 0.1 eV.
    assert line.energy_kev == pytest.approx(energy_kev, abs=1e-4)


@pytest.mark.parametrize(
    ("element", "k_alpha2", "k_beta1", "unit"),
    [
        # ITC Vol. C Table 4.2.2.6, the source of the Cu and Mo K-alpha1 (from memory), Angstrom.
        ("Cu", 1.54442740, 1.3922340, "angstrom"),
        ("Mo", 0.713607, 0.632303, "angstrom"),
        # Bearden & Burr, the source of the Cr, Fe, Co and Ag K-alpha1 (X-ray Data Booklet Table 1-2,
        # from memory), keV.
        ("Cr", 5.40551, 5.94671, "kev"),
        ("Fe", 6.39084, 7.05798, "kev"),
        ("Co", 6.91530, 7.64943, "kev"),
        ("Ag", 21.9903, 24.9424, "kev"),
    ],
)
def test_k_alpha2_and_k_beta1_come_from_the_k_alpha1_source(element, k_alpha2, k_beta1, unit):
    _, alpha2, beta1 = tube.anode_lines(element)
    if unit == "angstrom":
        assert (alpha2.wavelength_angstrom, beta1.wavelength_angstrom) == (k_alpha2, k_beta1)
    else:
        assert (alpha2.energy_kev, beta1.energy_kev) == (k_alpha2, k_beta1)


@pytest.mark.parametrize(
    ("element", "wavelength_angstrom"),
    [
        ("Cu", 1.5406),  # ITC Vol. C Table 4.2.2.6, as usually quoted
        ("Mo", 0.7093),  # ITC Vol. C Table 4.2.2.6, as usually quoted
    ],
)
def test_k_alpha1_as_quoted(element, wavelength_angstrom):
    assert round(tube.anode_lines(element)[0].wavelength_angstrom, 4) == wavelength_angstrom


@pytest.mark.parametrize(
    ("element", "edge_kev"),
    [
        ("Cr", 5.9892),  # Bearden & Burr (REFERENCE.md)
        ("Fe", 7.1120),  # Bearden & Burr (REFERENCE.md)
        ("Co", 7.7089),  # Bearden & Burr (REFERENCE.md)
        ("Cu", 8.9789),  # Bearden & Burr; xraydb gives 8.979
        ("Mo", 19.9995),  # Bearden & Burr (REFERENCE.md)
        ("Ag", 25.5140),  # Bearden & Burr (REFERENCE.md)
    ],
)
def test_k_edge_published(element, edge_kev):
    assert tube.k_edge_kev(element) == pytest.approx(edge_kev, abs=1e-9)


@pytest.mark.parametrize("element", tube.SUPPORTED_ANODES)
def test_lines_agree_with_xraydb(element):
    xray = xraydb.xray_lines(element)
    for line, key in zip(tube.anode_lines(element), ("Ka1", "Ka2", "Kb1"), strict=True):
        assert line.energy_kev * 1000 == pytest.approx(xray[key].energy, rel=XRAYDB_REL_TOL)
        assert line.energy_kev * line.wavelength_angstrom == pytest.approx(tube.HC_KEV_ANGSTROM)


@pytest.mark.parametrize("element", tube.SUPPORTED_ANODES)
def test_edges_agree_with_xraydb(element):
    k_edge_ev = xraydb.xray_edge(element, "K").energy
    assert tube.k_edge_kev(element) * 1000 == pytest.approx(k_edge_ev, rel=XRAYDB_REL_TOL)
    assert tube.l3_edge_kev(element) * 1000 == pytest.approx(
        xraydb.xray_edge(element, "L3").energy, rel=XRAYDB_REL_TOL
    )


@pytest.mark.parametrize("element", tube.SUPPORTED_ANODES)
def test_lines_lie_below_the_k_edge(element):
    energies = [line.energy_kev for line in tube.anode_lines(element)]
    # K-alpha2 < K-alpha1 < K-beta1 < K edge: the order every table shows.
    assert energies[1] < energies[0] < energies[2] < tube.k_edge_kev(element)


@pytest.mark.parametrize(
    ("given", "symbol"),
    [("cu", "Cu"), ("MO", "Mo"), (" w ", "W"), ("Rh", "Rh")],
)
def test_element_case_and_spaces_ignored(given, symbol):
    assert tube.anode_lines(given) == tube.anode_lines(symbol)


@pytest.mark.parametrize(
    ("kv", "lambda_min_angstrom"),
    [
        (40, 0.30996),  # ITC Vol. C 4.2.2, Duane-Hunt: 12.398 / 40
        (12.39841857, 1.0),  # ITC Vol. C 4.2.2: hc in keV*Angstrom
        (60, 0.20664),  # ITC Vol. C 4.2.2, Duane-Hunt: 12.398 / 60
    ],
)
def test_duane_hunt(kv, lambda_min_angstrom):
    assert tube.duane_hunt_min_wavelength_angstrom(kv) == pytest.approx(
        lambda_min_angstrom, abs=5e-6
    )


@pytest.mark.parametrize("kv", [10, 40, 45.5, 60])
def test_max_photon_energy_is_kvp(kv):
    assert tube.max_photon_energy_kev(kv) == kv  # Duane-Hunt: E_max = e * kVp


@pytest.mark.parametrize(
    ("kv", "ma", "watts"),
    [
        (40, 40, 1600.0),  # common practice arithmetic: kV x mA = W
        (45, 40, 1800.0),  # common practice arithmetic
        (50, 0.8, 40.0),  # common practice arithmetic: microfocus source
        (40, 0, 0.0),  # tube on standby, no current
    ],
)
def test_power(kv, ma, watts):
    assert tube.power_w(kv, ma) == pytest.approx(watts)


@pytest.mark.parametrize(
    ("kv", "ma", "minutes", "kwh"),
    [
        (40, 40, 60, 1.6),  # common practice arithmetic: 1600 W for 1 h
        (40, 40, 90, 2.4),  # common practice arithmetic
        (45, 40, 15, 0.45),  # common practice arithmetic: 1800 W for 0.25 h
        (40, 40, 0, 0.0),
    ],
)
def test_energy(kv, ma, minutes, kwh):
    assert tube.energy_kwh(kv, ma, minutes) == pytest.approx(kwh)


@pytest.mark.parametrize(
    ("kv", "ma", "minutes", "hours", "kwh"),
    [
        ([40, 45], [40, 40], [60, 120], 3.0, 1.6 + 3.6),
        (np.array([40.0]), np.array([30.0]), np.array([30.0]), 0.5, 0.6),
        (40, 40, [30, 30, 60], 2.0, 3.2),  # one setting, many sessions: broadcast
        ([], [], [], 0.0, 0.0),  # no sessions in the period
    ],
)
def test_tube_usage(kv, ma, minutes, hours, kwh):
    total_hours, total_kwh = tube.tube_usage(kv, ma, minutes)
    assert (total_hours, total_kwh) == (pytest.approx(hours), pytest.approx(kwh))
    assert type(total_hours) is float and type(total_kwh) is float


@pytest.mark.parametrize(
    ("kv", "element", "excited"),
    [
        (18, "Mo", False),  # Mo K edge 19.9995 keV, Bearden & Burr
        (19.9995, "Mo", False),  # exactly at the edge: not excited
        (20, "Mo", True),  # 20 kV > 19.9995 keV
        (8, "Cu", False),  # Cu K edge 8.9789 keV, Bearden & Burr
        (8.9789, "Cu", False),  # exactly at the edge
        (40, "Cu", True),
        (40, "Ag", True),  # Ag K edge 25.514 keV, Bearden & Burr
        (25, "Ag", False),
        (60, "W", False),  # W K edge 69.525 keV (xraydb): a 60 kV W tube gives L lines only
        (40, "Rh", True),  # Rh K edge 23.22 keV (xraydb)
    ],
)
def test_k_lines_excited(kv, element, excited):
    assert tube.k_lines_excited(kv, element) is excited
    assert (tube.k_lines_note(kv, element) is None) is excited


@pytest.mark.parametrize(
    ("kv", "element", "note"),
    [
        (18, "Mo", "18 kV does not exceed the Mo K edge (19.9995 keV): no Mo K lines"),
        (8, "cu", "8 kV does not exceed the Cu K edge (8.9789 keV): no Cu K lines"),
        (40, "Cu", None),
    ],
)
def test_k_lines_note(kv, element, note):
    assert tube.k_lines_note(kv, element) == note


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: tube.power_w(0, 40), "above 0 kV"),
        (lambda: tube.power_w(-40, 40), "above 0 kV"),
        (lambda: tube.power_w(float("nan"), 40), "above 0 kV"),
        (lambda: tube.power_w(40, -1), "cannot be negative"),
        (lambda: tube.energy_kwh(40, 40, -5), "beam-on time"),
        (lambda: tube.tube_usage([40, 0], [40, 40], [10, 10]), "above 0 kV"),
        (lambda: tube.duane_hunt_min_wavelength_angstrom(0), "above 0 kV"),
        (lambda: tube.max_photon_energy_kev(-1), "above 0 kV"),
        (lambda: tube.k_lines_excited(0, "Cu"), "above 0 kV"),
        (lambda: tube.anode_lines("Xx"), "unknown anode element"),
        (lambda: tube.k_edge_kev("Pb"), "unknown anode element"),
        (lambda: tube.l3_edge_kev(""), "unknown anode element"),
        (lambda: tube.k_lines_excited(40, "Unobtainium"), "unknown anode element"),
    ],
)
def test_invalid_input_is_refused(call, message):
    with pytest.raises(ValueError, match=message):
        call()
