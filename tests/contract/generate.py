# ruff: noqa: E741, RUF059  (I, V, C are the textbook names; unpacked circuit tuples are shared)
"""Write the blind contract cases: worksheets (format 1) and what check output format 1 must say.

Written from DESIGN.md ("Worksheet format 1", "Check output format 1") and
docs/worksheet.md, docs/transients.md only, as an outside tester would. Every circuit
and value here is invented; every expected value is computed independently in this
file with Python complex arithmetic, numpy or scipy (never with handcheck), and the
comment beside it names the source of the closed form: "textbook" means a standard
closed form of linear circuit theory (voltage divider, series and parallel impedance,
complex power S = V I*/2 for peak phasors, first- and second-order step responses),
written from memory.

For each case this script writes ``cases/NAME.toml`` (the worksheet) and
``cases/NAME.expect.json`` (its named checks, each a list of assertions on the JSON
output; tests/test_contract_blind.py says what each assertion kind means). Malformed
worksheets are ``cases/bad_NAME.toml`` with an expectation of exit status 2.

Run it after changing a case (the suite fails while the files are out of date)::

    python3 tests/contract/generate.py            # writes tests/contract/cases/
    python3 tests/contract/generate.py OUT_DIR    # writes elsewhere
"""

from __future__ import annotations

import cmath
import json
import math
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
PI = math.pi
SQ2 = math.sqrt(2.0)


# ---------------------------------------------------------------------------------
# claim writers: each returns (text written in the worksheet, its value in SI units)
# ---------------------------------------------------------------------------------
def c_real(x: float, nd: int, unit: str = "", scale: float = 1.0) -> tuple[str, complex]:
    s = f"{x / scale:.{nd}f}"
    return (f"{s} {unit}".strip(), complex(float(s) * scale))


def c_rect(z: complex, nd: int, unit: str = "", scale: float = 1.0) -> tuple[str, complex]:
    re_s = f"{z.real / scale:.{nd}f}"
    im_s = f"{abs(z.imag) / scale:.{nd}f}"
    sign = "-" if z.imag < 0 else "+"
    text = f"{re_s} {sign} {im_s}j {unit}".strip()
    return text, complex(float(re_s), float(im_s) * (-1 if sign == "-" else 1)) * scale


def c_polar(
    z: complex, nd: int, na: int, unit: str = "", scale: float = 1.0, sym: str = "∠", deg: bool = True
) -> tuple[str, complex]:
    mag_s = f"{abs(z) / scale:.{nd}f}"
    ang = math.degrees(cmath.phase(z))
    ang_s = f"{ang:.{na}f}"
    head = f"{mag_s} {unit}".strip()
    text = f"{head} {sym} {ang_s}" + (" deg" if deg else "")
    return text, float(mag_s) * scale * cmath.exp(1j * math.radians(float(ang_s)))


def c_polar_deg(mag: float, ang_deg: float, nd: int, na: int, unit: str = "", scale: float = 1.0):
    """A polar claim with an angle chosen by hand (used to build mistakes)."""
    mag_s = f"{mag / scale:.{nd}f}"
    ang_s = f"{ang_deg:.{na}f}"
    text = f"{mag_s} {unit} ∠ {ang_s} deg".replace("  ", " ")
    return text, float(mag_s) * scale * cmath.exp(1j * math.radians(float(ang_s)))


def par(a: complex, b: complex) -> complex:
    # parallel combination a*b/(a + b) (textbook)
    return a * b / (a + b)


def wrap_deg(a: float) -> float:
    return (a + 180.0) % 360.0 - 180.0


# ---------------------------------------------------------------------------------
# registry
# ---------------------------------------------------------------------------------
@dataclass
class Case:
    name: str
    text: str
    checks: list[tuple[str, list[dict]]] = field(default_factory=list)


CASES: dict[str, Case] = {}
MALFORMED: dict[str, str] = {}


def register(name: str, text: str) -> Case:
    case = Case(name, text)
    CASES[name] = case
    return case


def header(title: str, *extra: str) -> str:
    return "\n".join(["[worksheet]", "format = 1", f'title = "{title}"', *extra]) + "\n"


def step(
    name: str, claim: str, quantity: str | None = None, formula: str | None = None, tolerance: str | None = None
) -> str:
    lines = ["", "[[step]]", f'name = "{name}"']
    if quantity is not None:
        q = quantity.replace("'", "")
        lines.append(f"quantity = '{q}'" if '"' in q else f'quantity = "{q}"')
    if formula is not None:
        lines.append(f'formula = "{formula}"')
    lines.append(f'claim = "{claim}"')
    if tolerance is not None:
        lines.append(f'tolerance = "{tolerance}"')
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------------
# assertions, written as data (tests/test_contract_blind.py carries them out)
# ---------------------------------------------------------------------------------
def _pair(z: complex) -> list[float]:
    z = complex(z)
    return [z.real, z.imag]


def expect_top(out: list[dict], *, ok: bool, first: str | None, rc: int) -> None:
    """Exit status, ``ok`` and ``first_divergence``; the file's path and SHA-256 are always checked."""
    out.append({"kind": "top", "ok": ok, "first": first, "rc": rc})


def expect_step(
    out: list[dict],
    name: str,
    verdict: str,
    exp: complex | None = None,
    claim: complex | None = None,
    *,
    mag: bool = False,
    diag: tuple[str, ...] = (),
    caused_by: str | None = None,
    caused_by_any: tuple[str, ...] = (),
    claimed: str | None = None,
) -> None:
    """One step's verdict, exact value, relative error of the claim, diagnosis codes and cause.

    ``mag``: the claim is a plain magnitude, its error taken against ``abs(exp)``.
    ``caused_by_any``: ``caused_by`` is one of these (else it must equal ``caused_by``).
    ``diag`` empty: no catalogued mistake was built into the claim, so none may be reported.
    """
    rec: dict = {"kind": "step", "step": name, "verdict": verdict}
    if caused_by_any:
        rec["caused_by_any"] = list(caused_by_any)
    else:
        rec["caused_by"] = caused_by
    if claimed is not None:
        rec["claimed"] = claimed
    if exp is not None:
        exp = complex(exp)
        rec["expected_si"] = _pair(exp)
        if claim is not None:
            rec["error"] = abs(claim - abs(exp)) / abs(exp) if mag else abs(claim - exp) / abs(exp)
    rec["diagnosis"] = list(diag)
    out.append(rec)


def expect_verdict(out: list[dict], name: str, verdict: str, **caused_by: str | None) -> None:
    """Only the verdict (and, if given, ``caused_by``) of one step."""
    out.append({"kind": "verdict", "step": name, "verdict": verdict, **caused_by})


def expect_real(out: list[dict], name: str, value: float, rel: float, *, absolute: bool = False) -> None:
    """The real part of a step's ``expected_si`` (its absolute value if ``absolute``) within ``rel``."""
    out.append({"kind": "expected_real", "step": name, "value": value, "rel": rel, "absolute": absolute})


def expect_cautions(out: list[dict], present: bool) -> None:
    """``cautions`` not empty (``present``), or missing or empty."""
    out.append({"kind": "cautions", "present": present})


# =================================================================================
# 1. RC low-pass, peak phasors, frequency defaulted from the only source (1 kHz)
# =================================================================================
def _rc_circuit():
    w = 2 * PI * 1000.0
    R, C, V = 100.0, 1e-6, 10.0
    Zc = 1 / (1j * w * C)  # textbook: capacitor impedance 1/(jwC)
    I = V / (R + Zc)  # textbook: series current
    Vb = I * Zc
    return w, R, C, V, Zc, I, Vb


RC_PARTS = """
[parts]
Vs = { voltage = "10 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "b"] }
C1 = { capacitor = "1 uF", nodes = ["b", "gnd"] }
"""


def _case_rc_peak():
    w, R, C, V, Zc, I, Vb = _rc_circuit()
    Xc = Zc.imag
    Zab = par(R, Zc)  # with Vs zeroed, a is gnd: R1 in parallel with C1 (textbook)
    Vab = V - Vb
    H = Vb / V
    P = abs(I) ** 2 * R / 2  # textbook: average power with peak phasors
    Qc = (Vb * I.conjugate()).imag / 2  # textbook: S = V I*/2, absorbed by C1
    Svs = abs(V * (-I).conjugate()) / 2  # source current entering its + terminal is -I
    Ps = (V * (-I).conjugate()).real / 2
    pf = abs(Ps) / Svs
    Yab = 1 / Zab
    cl = {
        "XC": c_real(Xc, 2, "ohm"),
        "ZC": (f"{Xc:.2f}j ohm", complex(0, float(f"{Xc:.2f}"))),
        "Zab": c_rect(Zab, 2, "ohm"),
        "VR": c_rect(I * R, 3, "V"),
        "I": c_polar(I, 3, 2, "mA", 1e-3),
        "Vb": c_polar(Vb, 3, 2, "V", sym="/_", deg=False),
        "Vab": c_rect(Vab, 3, "V"),
        "H": c_polar(H, 4, 2),
        "P": c_real(P, 2, "mW", 1e-3),
        "Qc": c_real(Qc, 2, "mvar", 1e-3),
        "S": c_real(Svs, 2, "mVA", 1e-3),
        "pf": c_real(pf, 4),
        "Yab": c_rect(Yab, 4, "mS", 1e-3),
        "Rb": c_real(Zab.real, 2, "ohm"),
        "Xab": c_real(Zab.imag, 2, "ohm"),
        "Ps": c_real(Ps, 2, "mW", 1e-3),
        "Isrc": c_polar(-I, 3, 2, "mA", 1e-3),  # current entering the + terminal: -I (docs)
    }
    text = header("RC low-pass, peak phasors, frequency from the source") + RC_PARTS
    text += step("XC", cl["XC"][0], "reactance(C1)", "-1/(w*C1)")
    text += step("ZC", cl["ZC"][0], "impedance(C1)")
    text += step("Zab", cl["Zab"][0], "impedance(a, b)")
    text += step("VR", cl["VR"][0], "voltage(R1)")
    text += step("I", cl["I"][0], "current(R1)", "Vs/(R1 + j*XC)")
    text += step("Vb", cl["Vb"][0], "voltage(b)", "I*j*XC")
    text += step("Vab", cl["Vab"][0], "voltage(a, b)", "Vs - Vb")
    text += step("H", cl["H"][0], "transfer(voltage(b), voltage(a))", "1/(1 + j*w*R1*C1)")
    text += step("P", cl["P"][0], "power(R1)", "abs(I)^2*R1/2")
    text += step("Qc", cl["Qc"][0], "reactive_power(C1)")
    text += step("S", cl["S"][0], "apparent_power(Vs)")
    text += step("pf", cl["pf"][0], "power_factor(Vs)", "cos(arg(Vs) - arg(I))")
    text += step("Yab", cl["Yab"][0], "admittance(a, b)", "1/R1 + j*w*C1")
    text += step("Rb", cl["Rb"][0], "resistance(b)")
    text += step("Xab", cl["Xab"][0], "reactance(a, b)")
    text += step("Ps", cl["Ps"][0], "power(Vs)")
    text += step("Isrc", cl["Isrc"][0], "current(Vs)")
    case = register("rc_peak", text)
    exp = {
        "XC": Xc,
        "ZC": Zc,
        "Zab": Zab,
        "VR": I * R,
        "I": I,
        "Vb": Vb,
        "Vab": Vab,
        "H": H,
        "P": P,
        "Qc": Qc,
        "S": Svs,
        "pf": pf,
        "Yab": Yab,
        "Rb": Zab.real,
        "Xab": Zab.imag,
        "Ps": Ps,
        "Isrc": -I,
    }

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in exp.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1], claimed=cl[k][0])

    def no_caution(out):
        # DESIGN.md, Cautions: 10 V is extra-low voltage, so no caution
        expect_cautions(out, present=False)

    case.checks += [("top", top), ("steps", steps), ("no_caution", no_caution)]


_case_rc_peak()


# =================================================================================
# 2. the same RC circuit with one catalogued mistake per step (peak phasors)
# =================================================================================
def _case_rc_mistakes():
    w, R, C, V, Zc, I, Vb = _rc_circuit()
    f = 1000.0
    Xc = Zc.imag
    Rz, Lz = 30.0, 5e-3
    XL = w * Lz
    Zab = par(R, Zc)
    P = abs(I) ** 2 * R / 2
    cl = {}
    # hertz-as-angular: -1/(f C) instead of -1/(w C)
    cl["hz1"] = c_real(-1 / (f * C), 1, "ohm")
    cl["hz2"] = c_real(-1 / (f * C), 1, "ohm")
    # angular-as-hertz: 2*pi*w*L instead of w*L
    cl["ah"] = c_real(2 * PI * w * Lz, 2, "ohm")
    # reactance-sign: +1/(wC) for a capacitor
    cl["sgn"] = c_real(-Xc, 2, "ohm")
    # phase-sign: the angle of v(b) with the wrong sign
    cl["phs"] = c_polar_deg(abs(Vb), -math.degrees(cmath.phase(Vb)), 3, 2, "V")
    cl["phs2"] = c_rect(Vb.conjugate(), 3, "V")
    # prefix: the number of mA written with uA
    cl["pre"] = c_real(abs(I) * 1e-3, 3, "uA", 1e-6)
    # rms-as-peak: an rms value in a worksheet of peak phasors
    cl["rms"] = c_real(abs(I) / SQ2, 3, "mA", 1e-3)
    # power-half: |I|^2 R without the 1/2 of peak phasors
    cl["half"] = c_real(2 * P, 2, "mW", 1e-3)
    # sine-reference: the source taken as a sine, every angle 90 deg behind
    cl["sine"] = c_polar_deg(abs(Vb), math.degrees(cmath.phase(Vb)) - 90, 3, 2, "V")
    # series-as-parallel: series sum where the parallel combination belongs
    cl["s4p"] = c_rect(R + Zc, 2, "ohm")
    # parallel-as-series: parallel combination where the series sum belongs
    cl["p4s"] = c_rect(par(Rz, 1j * XL), 3, "ohm")
    # impedance-as-admittance: the impedance's number claimed as the admittance
    cl["adm"] = c_rect(Zab, 2, "S")
    text = header("RC low-pass with one mistake per step") + RC_PARTS
    # a constant current source keeps node p connected; zeroed, it is an open (docs)
    text += 'Ip = { current = "1 mA", nodes = ["gnd", "p"] }\n'
    text += 'Rz = { resistor = "30 ohm", nodes = ["p", "q"] }\nLz = { inductor = "5 mH", nodes = ["q", "gnd"] }\n'
    text += step("hz1", cl["hz1"][0], "reactance(C1)", "-1/(f*C1)")
    text += step("hz2", cl["hz2"][0], "reactance(C1)")
    text += step("ah", cl["ah"][0], "reactance(Lz)", "2*pi*w*Lz")
    text += step("sgn", cl["sgn"][0], "reactance(C1)")
    text += step("phs", cl["phs"][0], "voltage(b)")
    text += step("phs2", cl["phs2"][0], "voltage(b)")
    text += step("pre", cl["pre"][0], "current(R1)")
    text += step("rms", cl["rms"][0], "current(R1)")
    text += step("half", cl["half"][0], "power(R1)", "abs(Vs/(R1 + 1/(j*w*C1)))^2*R1")
    text += step("sine", cl["sine"][0], "voltage(b)")
    text += step("s4p", cl["s4p"][0], "impedance(a, b)", "R1 + 1/(j*w*C1)")
    text += step("s4pa", cl["s4p"][0], "impedance(a, b)", "R1 || (1/(j*w*C1))")
    text += step("p4s", cl["p4s"][0], "impedance(p)", "Rz || (j*w*Lz)")
    text += step("adm", cl["adm"][0], "admittance(a, b)")
    case = register("rc_mistakes", text)

    table = {
        # name: (verdict, expected, plain-claim-vs-magnitude, code)
        "hz1": ("formula", Xc, False, "hertz-as-angular"),
        "hz2": ("differs", Xc, False, "hertz-as-angular"),
        "ah": ("formula", XL, False, "angular-as-hertz"),
        "sgn": ("differs", Xc, False, "reactance-sign"),
        "phs": ("differs", Vb, False, "phase-sign"),
        "phs2": ("differs", Vb, False, "phase-sign"),
        "pre": ("differs", I, True, "prefix"),
        "rms": ("differs", I, True, "rms-as-peak"),
        "half": ("formula", P, False, "power-half"),
        "sine": ("differs", Vb, False, "sine-reference"),
        "s4p": ("formula", Zab, False, "series-as-parallel"),
        "s4pa": ("arithmetic", Zab, False, "series-as-parallel"),
        "p4s": ("formula", Rz + 1j * XL, False, "parallel-as-series"),
        "adm": ("differs", 1 / Zab, False, "impedance-as-admittance"),
    }

    def top(out):
        expect_top(out, ok=False, first="hz1", rc=1)

    case.checks.append(("top", top))

    def mk(k):
        verdict, e, mag, code = table[k]

        def chk(out):
            expect_step(out, k, verdict, complex(e), cl[k if k != "s4pa" else "s4p"][1], mag=mag, diag=(code,))

        return chk

    for k in table:
        case.checks.append((k, mk(k)))


_case_rc_mistakes()


# =================================================================================
# 3. RL, rms phasors, frequency in rad/s on the worksheet and the source, 30 deg phase
# =================================================================================
def _case_rl_rms():
    w = 1000.0
    R, L = 8.0, 6e-3
    V = 12 * cmath.exp(1j * math.radians(30))  # rms phasor of "12 V rms", 30 deg
    Z = R + 1j * w * L  # 8 + 6j (textbook)
    I = V / Z  # 1.2 A rms at -6.87 deg
    P = abs(I) ** 2 * R  # rms phasors: no 1/2 (textbook)
    QL = abs(I) ** 2 * w * L
    Svs = V * (-I).conjugate()  # absorbed by the source: current into + is -I
    Zb = par(R, 1j * w * L)  # v(b) looking back with Vs shorted: 2.88 + 3.84j
    cl = {
        "fr": c_real(w / (2 * PI), 2, "Hz"),
        "XL": c_real(w * L, 3, "ohm"),
        "I": c_polar(I, 3, 2, "A"),
        "P": c_real(P, 2, "W"),
        "QL": c_real(QL, 2, "var"),
        "S": c_real(abs(Svs), 2, "VA"),
        "pf": c_real(abs(Svs.real) / abs(Svs), 3),
        "Ps": c_real(Svs.real, 2, "W"),
        "Qs": c_real(Svs.imag, 2, "var"),
        "Zb": c_rect(Zb, 2, "ohm"),
        "Rb": c_real(Zb.real, 2, "ohm"),
        "Xb": c_real(Zb.imag, 2, "ohm"),
        "VL": c_polar(I * 1j * w * L, 2, 2, "V"),
    }
    text = header("RL load, rms phasors, rad/s", 'phasors = "rms"', 'frequency = "1000 rad/s"')
    text += """
[parts]
Vs = { voltage = "12 V rms", frequency = "1000 rad/s", phase = "30 deg", nodes = ["a", "gnd"] }
R1 = { resistor = "8 ohm", nodes = ["a", "b"] }
L1 = { inductor = "6 mH", nodes = ["b", "gnd"] }
"""
    text += step("fr", cl["fr"][0], None, "w/(2*pi)")
    text += step("XL", cl["XL"][0], "reactance(L1)", "w*L1")
    text += step("I", cl["I"][0], "current(R1)", "Vs/(R1 + j*XL)")
    text += step("P", cl["P"][0], "power(R1)", "abs(I)^2*R1")
    text += step("QL", cl["QL"][0], "reactive_power(L1)", "abs(I)^2*XL")
    text += step("S", cl["S"][0], "apparent_power(Vs)", "abs(Vs)*abs(I)")
    text += step("pf", cl["pf"][0], "power_factor(Vs)", "P/S")
    text += step("Ps", cl["Ps"][0], "power(Vs)")
    text += step("Qs", cl["Qs"][0], "reactive_power(Vs)")
    text += step("Zb", cl["Zb"][0], "impedance(b)", "R1 || (j*XL)")
    text += step("Rb", cl["Rb"][0], "resistance(b)")
    text += step("Xb", cl["Xb"][0], "reactance(b)")
    text += step("VL", cl["VL"][0], "voltage(L1)", "I*j*XL")
    case = register("rl_rms_rads", text)
    exp = {
        "fr": w / (2 * PI),
        "XL": w * L,
        "I": I,
        "P": P,
        "QL": QL,
        "S": abs(Svs),
        "pf": abs(Svs.real) / abs(Svs),
        "Ps": Svs.real,
        "Qs": Svs.imag,
        "Zb": Zb,
        "Rb": Zb.real,
        "Xb": Zb.imag,
        "VL": I * 1j * w * L,
    }

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in exp.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_rl_rms()


# =================================================================================
# 4. rms phasors: peak-as-rms, degrees-as-radians, radians-as-degrees
# =================================================================================
def _case_rms_mistakes():
    Vd = 10 * cmath.exp(1j * math.radians(30))  # "10 V rms", 30 deg: rms phasor
    Vr = 10 * cmath.exp(1j * 0.5)  # "10 V rms", 0.5 rad
    Rd = 10.0
    w = 2 * PI * 50
    Hm = 1 / (1 + 1j * w * 1e3 * 2e-6)  # RC divider behind Vr (textbook)
    Vm = Vr * Hm
    cl = {
        "ok_d": c_polar(Vd, 3, 2, "V"),
        # peak-as-rms: the peak value written where the rms phasor belongs
        "pk": c_real(abs(Vd) * SQ2, 2, "V"),
        "pk2": c_polar_deg(abs(Vd / Rd) * SQ2, 30.0, 3, 2, "A"),
        # degrees-as-radians: the 30 of "30 deg" used as 30 rad
        "dr": c_polar_deg(10.0, wrap_deg(math.degrees(30.0)), 3, 2, "V"),
        # radians-as-degrees: the 0.5 of "0.5 rad" used as 0.5 deg
        "r2d": c_polar_deg(10.0, 0.5, 3, 2, "V"),
        # power-half, rms phasors: |V|^2/(2R), the 1/2 of peak phasors where it does not belong
        "ph": c_real(abs(Vd) ** 2 / Rd / 2, 3, "W"),
        "mf": c_polar(Vm, 4, 2, "V"),
        "m0": c_real((SQ2 * Vm).real, 4, "V"),
        # v(d) = 14.142 cos(wt + 30 deg) for all t: its largest absolute value is 14.142 V
        "dpk": c_real(10 * SQ2, 3, "V"),
        # radians-as-degrees inside the circuit: v(m) with Vr's phase taken as 0.5 deg
        "r2dm": c_polar_deg(abs(Vm), 0.5 + math.degrees(cmath.phase(Hm)), 4, 2, "V"),
    }
    text = header("Two rms sources, angle slips", 'phasors = "rms"')
    text += """
[parts]
Vd = { voltage = "10 V rms", frequency = "50 Hz", phase = "30 deg", nodes = ["d", "gnd"] }
Rd = { resistor = "10 ohm", nodes = ["d", "gnd"] }
Vr = { voltage = "10 V rms", frequency = "50 Hz", phase = "0.5 rad", nodes = ["r", "gnd"] }
Rr = { resistor = "10 ohm", nodes = ["r", "gnd"] }
Rm = { resistor = "1 kohm", nodes = ["r", "m"] }
Cm = { capacitor = "2 uF", nodes = ["m", "gnd"] }

[transient]
start = "steady"
"""
    text += step("ok_d", cl["ok_d"][0], "voltage(d)", "Vd")
    text += step("pk", cl["pk"][0], "voltage(d)")
    text += step("pk2", cl["pk2"][0], "current(Rd)")
    text += step("dr", cl["dr"][0], "voltage(d)")
    text += step("r2d", cl["r2d"][0], "voltage(r)")
    text += step("r2dm", cl["r2dm"][0], "voltage(m)")
    text += step("ph", cl["ph"][0], "power(Rd)", "abs(Vd)^2/Rd/2")
    # time domain under rms phasors: final() is the phasor in the worksheet's convention,
    # initial() an instantaneous value (peak sqrt(2) times rms)
    text += step("mf", cl["mf"][0], "final(voltage(m))")
    text += step("m0", cl["m0"][0], "initial(voltage(m))")
    text += step("dpk", cl["dpk"][0], "peak(voltage(d))")
    case = register("rms_mistakes", text)

    def top(out):
        expect_top(out, ok=False, first="pk", rc=1)

    def ok_d(out):
        expect_step(out, "ok_d", "agrees", Vd, cl["ok_d"][1])

    def pk(out):
        expect_step(out, "pk", "differs", Vd, cl["pk"][1], mag=True, diag=("peak-as-rms",))
        expect_step(out, "pk2", "differs", Vd / Rd, cl["pk2"][1], diag=("peak-as-rms",))

    def dr(out):
        expect_step(out, "dr", "differs", Vd, cl["dr"][1], diag=("degrees-as-radians",))

    def rd(out):
        expect_step(out, "r2d", "differs", Vr, cl["r2d"][1], diag=("radians-as-degrees",))

    def ph(out):
        expect_step(out, "ph", "formula", complex(abs(Vd) ** 2 / Rd), cl["ph"][1], diag=("power-half",))

    def tdom(out):
        expect_step(out, "mf", "agrees", Vm, cl["mf"][1])
        expect_step(out, "m0", "agrees", complex((SQ2 * Vm).real), cl["m0"][1])

    def crest(out):
        # DESIGN.md: peak(Q) is the "largest absolute value for t > 0"; for a steady sinusoid
        # that is its crest, reached with either sign, so the positive crest must agree
        expect_real(out, "dpk", 10 * SQ2, 1e-9, absolute=True)
        expect_step(out, "dpk", "agrees")

    def rdm(out):
        expect_step(out, "r2dm", "differs", Vm, cl["r2dm"][1], diag=("radians-as-degrees",))

    case.checks += [
        ("top", top),
        ("ok_d", ok_d),
        ("peak_as_rms", pk),
        ("degrees_as_radians", dr),
        ("radians_as_degrees", rd),
        ("radians_as_degrees_in_circuit", rdm),
        ("power_half_rms", ph),
        ("time_domain_rms", tdom),
        ("peak_of_steady_sine", crest),
    ]


_case_rms_mistakes()


# =================================================================================
# 5. two sources at different frequencies; worksheet frequency in Hz picks one
# =================================================================================
def _case_two_freq():
    f = 50.0
    w = 2 * PI * f
    R1, R2, C = 100.0, 200.0, 10e-6
    Zc = 1 / (1j * w * C)
    # V2 (150 Hz) contributes nothing at 50 Hz; it is still a short (docs: Frequency)
    Zlow = par(R2, Zc)
    Vout = 10 * Zlow / (R1 + Zlow)  # textbook divider
    IR2 = (0 - Vout) / R2  # current entering R2 at c (c is at 0 V at 50 Hz)
    cl = {
        "fa": c_real(f, 0, "Hz"),
        "wa": c_real(w, 2, "rad/s"),
        "Vo": c_polar(Vout, 3, 2, "V"),
        "I2": c_polar(IR2, 3, 2, "mA", 1e-3),
    }
    text = header("Two sources, analysis at 50 Hz", 'frequency = "50 Hz"')
    text += """
[parts]
V1 = { voltage = "10 V", frequency = "50 Hz", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "out"] }
V2 = { voltage = "5 V", frequency = "150 Hz", nodes = ["c", "gnd"] }
R2 = { resistor = "200 ohm", nodes = ["c", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
"""
    text += step("fa", cl["fa"][0], None, "f")
    text += step("wa", cl["wa"][0], None, "w")
    text += step("Vo", cl["Vo"][0], "voltage(out)", "V1*(R2 || 1/(j*w*C1))/(R1 + (R2 || 1/(j*w*C1)))")
    text += step("I2", cl["I2"][0], "current(R2)")
    case = register("two_freq", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"fa": f, "wa": w, "Vo": Vout, "I2": IR2}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_two_freq()


# =================================================================================
# 6. DC: constant sources only (no sinusoid means DC); L a short, C an open
# =================================================================================
def _case_dc():
    # nodal analysis at c (textbook): (12 - Vc)/1k + 2 mA = Vc/2k
    Vc = (12 / 1000 + 2e-3) / (1 / 1000 + 1 / 2000)
    IL = (12 - Vc) / 1000
    PR2 = Vc**2 / 2000  # DC: P = V I, no 1/2
    PI1 = (0 - Vc) * 2e-3  # I1 voltage v(gnd) - v(c), current 2 mA from gnd to c
    PV1 = 12 * (-IL)
    Zc = par(1000.0, 2000.0)  # V1 short, I1 open, L short, C open
    cl = {
        "Vc": c_real(Vc, 3, "V"),
        "IL": c_real(IL, 4, "mA", 1e-3),
        "PR2": c_real(PR2, 2, "mW", 1e-3),
        "PI1": c_real(PI1, 2, "mW", 1e-3),
        "PV1": c_real(PV1, 2, "mW", 1e-3),
        "Zc": c_real(Zc, 2, "ohm"),
        "VL": ("0 V", 0j),
        "IC": ("0 A", 0j),
    }
    text = header("DC bias network")
    text += """
[parts]
V1 = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "c"] }
R2 = { resistor = "2 kohm", nodes = ["c", "gnd"] }
C1 = { capacitor = "1 uF", nodes = ["c", "gnd"] }
I1 = { current = "2 mA", nodes = ["gnd", "c"] }
"""
    text += step("Vc", cl["Vc"][0], "voltage(c)", "(V1/R1 + I1)/(1/R1 + 1/R2)")
    text += step("IL", cl["IL"][0], "current(L1)", "(V1 - Vc)/R1")
    text += step("PR2", cl["PR2"][0], "power(R2)", "Vc^2/R2")
    text += step("PI1", cl["PI1"][0], "power(I1)")
    text += step("PV1", cl["PV1"][0], "power(V1)")
    text += step("Zc", cl["Zc"][0], "impedance(c)", "R1 || R2")
    text += step("VL", cl["VL"][0], "voltage(L1)")
    text += step("IC", cl["IC"][0], "current(C1)")
    case = register("dc", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"Vc": Vc, "IL": IL, "PR2": PR2, "PI1": PI1, "PV1": PV1, "Zc": Zc}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])
        expect_step(out, "VL", "agrees", 0j)
        expect_step(out, "IC", "agrees", 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_dc()


# =================================================================================
# 7. vcvs at DC
# =================================================================================
def _case_vcvs():
    Vx = 1.0 * 1000 / 2000  # divider (textbook)
    Vo = 10 * Vx
    IRL = Vo / 500
    cl = {
        "Vo": c_real(Vo, 3, "V"),
        "IRL": c_real(IRL, 3, "mA", 1e-3),
        "IE": c_real(-IRL, 3, "mA", 1e-3),
        "PE": c_real(Vo * -IRL, 2, "mW", 1e-3),
        "H": c_real(Vo / 1.0, 3),
    }
    text = header("VCVS buffer, DC")
    text += """
[parts]
V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "x"] }
R2 = { resistor = "1 kohm", nodes = ["x", "gnd"] }
buf = { vcvs = "10", nodes = ["out", "gnd"], control = ["x", "gnd"] }
RL = { resistor = "500 ohm", nodes = ["out", "gnd"] }
"""
    text += step("Vo", cl["Vo"][0], "voltage(out)", "buf*V1*R2/(R1 + R2)")
    text += step("IRL", cl["IRL"][0], "current(RL)", "Vo/RL")
    text += step("IE", cl["IE"][0], "current(buf)")
    text += step("PE", cl["PE"][0], "power(buf)")
    text += step("H", cl["H"][0], "transfer(voltage(out), voltage(in))")
    case = register("vcvs_dc", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"Vo": Vo, "IRL": IRL, "IE": -IRL, "PE": -Vo * IRL, "H": Vo}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_vcvs()


# =================================================================================
# 8. vccs, 10 kHz, peak
# =================================================================================
def _case_vccs():
    w = 2 * PI * 1e4
    gm, RL, CL = 5e-3, 2000.0, 10e-9
    ZL = par(RL, 1 / (1j * w * CL))
    Vin = 2.0
    IG = gm * Vin  # through drv_gm from out to gnd (table: current gm*v(control) from nodes[0] to nodes[1])
    Vo = -IG * ZL  # KCL at out (textbook)
    PG = (Vo * IG.conjugate()).real / 2
    cl = {
        "Vo": c_polar(Vo, 3, 2, "V"),
        "H": c_rect(Vo / Vin, 3),
        "IG": c_real(IG, 3, "mA", 1e-3),
        "Zo": c_rect(ZL, 1, "ohm"),
        "PG": c_real(PG, 2, "mW", 1e-3),
    }
    text = header("Transconductance stage")
    text += """
[parts]
Vs = { voltage = "2 V", frequency = "10 kHz", nodes = ["in", "gnd"] }
Rin = { resistor = "1 kohm", nodes = ["in", "gnd"] }
drv_gm = { vccs = "5 mS", nodes = ["out", "gnd"], control = ["in", "gnd"] }
RL = { resistor = "2 kohm", nodes = ["out", "gnd"] }
CL = { capacitor = "10 nF", nodes = ["out", "gnd"] }
"""
    text += step("Vo", cl["Vo"][0], "voltage(out)", "-drv_gm*Vs*(RL || 1/(j*w*CL))")
    text += step("H", cl["H"][0], "transfer(voltage(out), voltage(in))")
    text += step("IG", cl["IG"][0], "current(drv_gm)", "drv_gm*Vs")
    text += step("Zo", cl["Zo"][0], "impedance(out)")
    text += step("PG", cl["PG"][0], "power(drv_gm)")
    case = register("vccs_ac", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"Vo": Vo, "H": Vo / Vin, "IG": IG, "Zo": ZL, "PG": PG}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1], mag=(k == "IG"))

    case.checks += [("top", top), ("steps", steps)]


_case_vccs()


# =================================================================================
# 9. cccs driven by a sinusoidal current source with a phase, peak
# =================================================================================
def _case_cccs():
    w = 2 * PI * 1000
    Is = 1e-3 * cmath.exp(1j * math.radians(45))
    iR1 = Is  # all of Is flows a -> gnd through R1
    R2, C2 = 100.0, 1e-6
    Zb = par(R2, 1 / (1j * w * C2))
    IF = 50 * iR1  # through mirror from gnd to b: into b
    Vb = IF * Zb
    Yb = 1 / R2 + 1j * w * C2  # independent source open: iR1 = 0, mirror silent (test-source method)
    P2 = abs(Vb) ** 2 / R2 / 2
    cl = {
        "iR1": c_polar(iR1, 3, 2, "mA", 1e-3),
        "Va": c_polar(iR1 * 1000, 3, 2, "V"),
        "Vb": c_polar(Vb, 3, 2, "V"),
        "IF": c_polar(IF, 2, 2, "mA", 1e-3),
        "Yb": c_rect(Yb, 3, "mS", 1e-3),
        "P2": c_real(P2, 3, "mW", 1e-3),
    }
    text = header("Current mirror model, 1 kHz")
    text += """
[parts]
Is = { current = "1 mA", frequency = "1 kHz", phase = "45 deg", nodes = ["gnd", "a"] }
R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }
mirror = { cccs = "50", nodes = ["gnd", "b"], control = "R1" }
R2 = { resistor = "100 ohm", nodes = ["b", "gnd"] }
C2 = { capacitor = "1 uF", nodes = ["b", "gnd"] }
"""
    text += step("iR1", cl["iR1"][0], "current(R1)", "Is")
    text += step("Va", cl["Va"][0], "voltage(a)", "iR1*R1")
    text += step("Vb", cl["Vb"][0], "voltage(b)", "mirror*iR1*(R2 || 1/(j*w*C2))")
    text += step("IF", cl["IF"][0], "current(mirror)")
    text += step("Yb", cl["Yb"][0], "admittance(b)")
    text += step("P2", cl["P2"][0], "power(R2)", "abs(Vb)^2/R2/2")
    text += step("beta", "50.00", "transfer(current(mirror), current(R1))", "mirror")
    case = register("cccs_ac", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"iR1": iR1, "Va": iR1 * 1000, "Vb": Vb, "IF": IF, "Yb": Yb, "P2": P2}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])
        expect_step(out, "beta", "agrees", 50 + 0j, 50 + 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_cccs()


# =================================================================================
# 10. ccvs, rms phasors, 500 Hz
# =================================================================================
def _case_ccvs():
    w = 2 * PI * 500
    IL = 10 / (100 + 1j * w * 20e-3)  # rms
    Vc = 50 * IL
    P3 = abs(Vc) ** 2 / 1000  # rms: no 1/2
    IH = -Vc / 1000  # current entering sense_amp at c
    cl = {
        "IL": c_polar(IL, 2, 2, "mA", 1e-3),
        "Vc": c_polar(Vc, 3, 2, "V"),
        "P3": c_real(P3, 3, "mW", 1e-3),
        "IH": c_polar(IH, 3, 2, "mA", 1e-3),
        "Zc": ("0 ohm", 0j),
    }
    text = header("Current sense by a transresistance", 'phasors = "rms"')
    text += """
[parts]
Vs = { voltage = "10 V rms", frequency = "500 Hz", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "b"] }
L1 = { inductor = "20 mH", nodes = ["b", "gnd"] }
sense_amp = { ccvs = "50 ohm", nodes = ["c", "gnd"], control = "L1" }
R3 = { resistor = "1 kohm", nodes = ["c", "gnd"] }
"""
    text += step("IL", cl["IL"][0], "current(L1)", "Vs/(R1 + j*w*L1)")
    text += step("Vc", cl["Vc"][0], "voltage(c)", "sense_amp*IL")
    text += step("P3", cl["P3"][0], "power(R3)", "abs(Vc)^2/R3")
    text += step("IH", cl["IH"][0], "current(sense_amp)")
    text += step("Zc", cl["Zc"][0], "impedance(c)")
    case = register("ccvs_rms", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"IL": IL, "Vc": Vc, "P3": P3, "IH": IH}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])
        # a ccvs controlled by a current that is zero with Vs shorted is itself a short
        expect_step(out, "Zc", "agrees", 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_ccvs()


# =================================================================================
# 11. ideal op-amp, inverting low-pass, peak
# =================================================================================
def _case_opamp_inv():
    w = 2 * PI * 1000
    Ri, Rf, Cf, RL = 10e3, 100e3, 1.5e-9, 10e3
    Zf = Rf / (1 + 1j * w * Rf * Cf)
    H = -Zf / Ri  # textbook inverting amplifier
    Vo = H * 1.0
    Iu = -(Vo / RL + Vo / Zf)  # current into the output pin (KCL at out, v(inv) = 0)
    cl = {
        "H": c_polar(H, 4, 2),
        "Vo": c_polar(Vo, 4, 2, "V"),
        "Iu": c_polar(Iu, 4, 2, "mA", 1e-3),
        "Zi": c_real(Ri, 3, "kohm", 1e3),
        "Vi": ("0 V", 0j),
    }
    text = header("Inverting active low-pass")
    text += """
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
Ri = { resistor = "10 kohm", nodes = ["in", "inv"] }
Rf = { resistor = "100 kohm", nodes = ["inv", "out"] }
Cf = { capacitor = "1.5 nF", nodes = ["inv", "out"] }
U1 = { opamp = "ideal", nodes = ["out", "gnd", "inv"] }
RL = { resistor = "10 kohm", nodes = ["out", "gnd"] }
"""
    text += step("H", cl["H"][0], "transfer(voltage(out), voltage(in))", "-(Rf || 1/(j*w*Cf))/Ri")
    text += step("Vo", cl["Vo"][0], "voltage(out)", "H*Vin")
    text += step("Iu", cl["Iu"][0], "current(U1)")
    text += step("Zi", cl["Zi"][0], "transfer(voltage(in), current(Ri))")
    text += step("Vi", cl["Vi"][0], "voltage(inv)")
    case = register("opamp_inv", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"H": H, "Vo": Vo, "Iu": Iu, "Zi": Ri}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])
        expect_step(out, "Vi", "agrees", 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_opamp_inv()


# =================================================================================
# 12. ideal op-amp, non-inverting with a roll-off capacitor; db and log10 in formulas
# =================================================================================
def _case_opamp_noninv():
    w = 2 * PI * 1e4
    R1, R2, C2 = 1e3, 9e3, 1e-9
    Z2 = par(R2, 1 / (1j * w * C2))
    H = 1 + Z2 / R1  # textbook non-inverting amplifier
    gdb = 20 * math.log10(abs(H))
    cl = {
        "H": c_polar(H, 4, 2),
        "Vo": c_polar(0.5 * H, 4, 2, "V"),
        "gdb": c_real(gdb, 3),
        "gdb2": c_real(gdb, 3),
        "Im": c_polar(0.5 / R1, 4, 2, "mA", 1e-3),
    }
    text = header("Non-inverting stage with roll-off")
    text += """
[parts]
Vin = { voltage = "0.5 V", frequency = "10 kHz", nodes = ["in", "gnd"] }
U1 = { opamp = "ideal", nodes = ["out", "in", "m"] }
R1 = { resistor = "1 kohm", nodes = ["m", "gnd"] }
R2 = { resistor = "9 kohm", nodes = ["out", "m"] }
C2 = { capacitor = "1 nF", nodes = ["out", "m"] }
"""
    text += step("H", cl["H"][0], "transfer(voltage(out), voltage(in))", "1 + (R2 || 1/(j*w*C2))/R1")
    text += step("Vo", cl["Vo"][0], "voltage(out)", "H*Vin")
    text += step("gdb", cl["gdb"][0], None, "db(H)")
    text += step("gdb2", cl["gdb2"][0], None, "20*log10(abs(H))")
    text += step("Im", cl["Im"][0], "current(R1)", "Vin/R1")
    case = register("opamp_noninv", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"H": H, "Vo": 0.5 * H, "gdb": gdb, "gdb2": gdb, "Im": 0.5 / R1}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_opamp_noninv()


# =================================================================================
# 13. coupled inductors, dots at the top ends
# =================================================================================
def _coupled_solution(k: float = 0.5):
    w = 2 * PI * 1000
    R1, L1, L2, RL = 10.0, 10e-3, 40e-3, 50.0
    M = k * math.sqrt(L1 * L2)
    # mesh equations with i1 into L1's dot, i2 into L2's dot (textbook coupled coils):
    #   Vs = R1 i1 + jwL1 i1 + jwM i2 ;  0 = jwM i1 + (jwL2 + RL) i2
    A = np.array([[R1 + 1j * w * L1, 1j * w * M], [1j * w * M, 1j * w * L2 + RL]])
    i1, i2 = np.linalg.solve(A, np.array([10.0, 0.0]))
    return w, R1, L1, L2, RL, M, complex(i1), complex(i2)


def _case_coupled():
    w, R1, L1, L2, RL, M, i1, i2 = _coupled_solution()
    Vc = -RL * i2
    VL1 = 1j * w * L1 * i1 + 1j * w * M * i2
    ZL1 = VL1 / i1  # in-circuit V/I, mutual voltage included (docs)
    Zeff = 1j * w * L1 + (w * M) ** 2 / (1j * w * L2 + RL)  # reflected impedance (textbook)
    Zb = par(R1, Zeff)
    P = abs(Vc) ** 2 / RL / 2
    cl = {
        "M": c_real(M, 3, "mH", 1e-3),
        "I1": c_polar(i1, 3, 2, "mA", 1e-3),
        "Vc": c_polar(Vc, 4, 2, "V"),
        "ZL1": c_rect(ZL1, 3, "ohm"),
        "Zb": c_rect(Zb, 3, "ohm"),
        "P": c_real(P, 3, "mW", 1e-3),
    }
    text = header("Coupled coils, resistive load")
    text += """
[parts]
Vs = { voltage = "10 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "gnd"] }
L2 = { inductor = "40 mH", nodes = ["c", "gnd"] }
mutual_ps = { coupling = "0.5", inductors = ["L1", "L2"] }
RL = { resistor = "50 ohm", nodes = ["c", "gnd"] }
"""
    text += step("M", cl["M"][0], None, "mutual_ps*sqrt(L1*L2)")
    text += step("I1", cl["I1"][0], "current(L1)")
    text += step("Vc", cl["Vc"][0], "voltage(c)")
    text += step("ZL1", cl["ZL1"][0], "impedance(L1)")
    text += step("Zb", cl["Zb"][0], "impedance(b)", "R1 || (j*w*L1 + (w*M)^2/(j*w*L2 + RL))")
    text += step("P", cl["P"][0], "power(RL)")
    case = register("coupled", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"M": M, "I1": i1, "Vc": Vc, "ZL1": ZL1, "Zb": Zb, "P": P}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_coupled()


def _case_coupled_reversed():
    # island A: the secondary's dotted end is gnd; island B: negative k.
    # Both are the same circuit with M -> -M on the secondary (textbook):
    # i1 unchanged, v(c) = -(v(c) with the dots aligned).
    w, R1, L1, L2, RL, M, i1, i2 = _coupled_solution()
    Vc_aligned = -RL * i2
    cl = {
        "VcA": c_polar(-Vc_aligned, 4, 2, "V"),
        "VcB": c_polar(-Vc_aligned, 4, 2, "V"),
        "I1A": c_polar(i1, 3, 2, "mA", 1e-3),
        "I1B": c_polar(i1, 3, 2, "mA", 1e-3),
    }
    # ideal 1:2 transformer, secondary dot at gnd: v(gnd) - v(s) = 2 v(p); the load seen
    # at the primary is Rs/4 = 25 ohm (textbook reflection), so v(p) = 10*25/35
    vp = 10 * 25 / 35
    Vsec, Ipri = -2 * vp, vp / 25
    # k = 1: M = sqrt(L5*L6); same mesh equations as above
    wk = 2 * PI * 1000
    Mk = math.sqrt(10e-3 * 40e-3)
    Ak = np.array([[10 + 1j * wk * 10e-3, 1j * wk * Mk], [1j * wk * Mk, 1j * wk * 40e-3 + 400]])
    k_1, k_2 = (complex(x) for x in np.linalg.solve(Ak, np.array([10.0, 0.0])))
    Vk3 = -400 * k_2
    Zeff = 1j * wk * 10e-3 + (wk * Mk) ** 2 / (1j * wk * 40e-3 + 400)
    Zk2 = par(10, Zeff)
    cl.update(
        {
            "Vsec": c_real(Vsec, 3, "V"),
            "Ipri": c_real(Ipri, 4, "A"),
            "Vk3": c_polar(Vk3, 3, 2, "V"),
            "Zk2": c_rect(Zk2, 3, "ohm"),
        }
    )
    text = header("Coupled coils, reversed dot and negative k")
    text += """
[parts]
Va = { voltage = "10 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "gnd"] }
L2 = { inductor = "40 mH", nodes = ["gnd", "c"] }
mutual_ps = { coupling = "0.5", inductors = ["L1", "L2"] }
RL = { resistor = "50 ohm", nodes = ["c", "gnd"] }
Vb = { voltage = "10 V", frequency = "1 kHz", nodes = ["a2", "gnd"] }
R2 = { resistor = "10 ohm", nodes = ["a2", "b2"] }
L3 = { inductor = "10 mH", nodes = ["b2", "gnd"] }
L4 = { inductor = "40 mH", nodes = ["c2", "gnd"] }
mutual_neg = { coupling = "-0.5", inductors = ["L3", "L4"] }
RL2 = { resistor = "50 ohm", nodes = ["c2", "gnd"] }
Vt = { voltage = "10 V", frequency = "1 kHz", nodes = ["t", "gnd"] }
Rt = { resistor = "10 ohm", nodes = ["t", "p"] }
T1 = { transformer = "1:2", nodes = ["p", "gnd", "gnd", "s"] }
Rs = { resistor = "100 ohm", nodes = ["s", "gnd"] }
Vk = { voltage = "10 V", frequency = "1 kHz", nodes = ["k1", "gnd"] }
Rk = { resistor = "10 ohm", nodes = ["k1", "k2"] }
L5 = { inductor = "10 mH", nodes = ["k2", "gnd"] }
L6 = { inductor = "40 mH", nodes = ["k3", "gnd"] }
mutual_tight = { coupling = "1", inductors = ["L5", "L6"] }
R6 = { resistor = "400 ohm", nodes = ["k3", "gnd"] }
"""
    text += step("VcA", cl["VcA"][0], "voltage(c)")
    text += step("VcB", cl["VcB"][0], "voltage(c2)")
    text += step("I1A", cl["I1A"][0], "current(L1)")
    text += step("I1B", cl["I1B"][0], "current(L3)")
    text += step("Vsec", cl["Vsec"][0], "voltage(s)")
    text += step("Ipri", cl["Ipri"][0], "current(T1)")
    text += step("Vk3", cl["Vk3"][0], "voltage(k3)")
    text += step("Zk2", cl["Zk2"][0], "impedance(k2)")
    case = register("coupled_reversed", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {
            "VcA": -Vc_aligned,
            "VcB": -Vc_aligned,
            "I1A": i1,
            "I1B": i1,
            "Vsec": Vsec,
            "Ipri": Ipri,
            "Vk3": Vk3,
            "Zk2": Zk2,
        }.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_coupled_reversed()


# =================================================================================
# 14. ideal transformer, 120 V rms mains: the high-voltage caution
# =================================================================================
def _case_transformer():
    n = 10.0  # N1/N2
    Rp, RL = 2.0, 1.0
    Zin = n**2 * RL  # reflected load (textbook)
    Ip = 120 / (Rp + Zin)  # rms
    Vp = Ip * Zin
    Vsec = Vp / n
    PL = Vsec**2 / RL
    Zp = par(Rp, Zin)
    cl = {
        "Ip": c_polar(complex(Ip), 4, 2, "A"),
        "Vp": c_polar(complex(Vp), 3, 2, "V"),
        "Vsec": c_real(Vsec, 3, "V"),
        "Vsf": c_polar(complex(Vsec), 3, 2, "V"),
        "PL": c_real(PL, 2, "W"),
        "Zp": c_real(Zp, 4, "ohm"),
        "Zin": c_real(Zin, 2, "ohm"),
    }
    text = header("Mains step-down, resistive load", 'phasors = "rms"')
    text += """
[parts]
Vs = { voltage = "120 V rms", frequency = "60 Hz", nodes = ["a", "gnd"] }
Rp = { resistor = "2 ohm", nodes = ["a", "p"] }
T1 = { transformer = "10:1", nodes = ["p", "gnd", "s", "gnd"] }
RL = { resistor = "1 ohm", nodes = ["s", "gnd"] }
"""
    text += step("Ip", cl["Ip"][0], "current(T1)")
    text += step("Vp", cl["Vp"][0], "voltage(p)")
    text += step("Vsec", cl["Vsec"][0], "voltage(s)")
    text += step("Vsf", cl["Vsf"][0], "voltage(s)", "T1*Vp")
    text += step("PL", cl["PL"][0], "power(RL)", "abs(Vsec)^2/RL")
    text += step("Zp", cl["Zp"][0], "impedance(p)")
    text += step("Zin", cl["Zin"][0], "transfer(voltage(p), current(T1))")
    case = register("transformer_hv", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)
        # DESIGN.md, Cautions: above 50 V rms the output carries a caution
        expect_cautions(out, present=True)

    def steps(out):
        for k, e in {"Ip": Ip, "Vp": Vp, "Vsec": Vsec, "Vsf": Vsec, "PL": PL, "Zp": Zp, "Zin": Zin}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_transformer()


# =================================================================================
# 15. the formula language: units, prefixes, ||, j, ids, steps, f, w, pi, functions
# =================================================================================
def _case_functions():
    Vs = 2 * cmath.exp(1j * PI / 3)  # "2 V", 60 deg, peak phasors
    w = 2 * PI * 1000
    rows = [
        # name, formula, expected (SI), claim text
        ("s1", "sqrt(R1*R2)", 200.0, "200.0 ohm"),
        ("s2", "exp(-1 ms/(R1*C1))", math.exp(-1), "0.3679"),
        ("s3", "R1*C1*ln(2)", 1e-3 * math.log(2), "0.6931 ms"),
        ("s4", "log10(1 MHz/f)", 3.0, "3.000"),
        ("s5", "sin(30 deg)", 0.5, "0.5000"),
        ("s6", "cos(pi/3)", 0.5, "0.5000"),
        ("s7", "tan(-45 deg)", -1.0, "-1.000"),
        ("s8", "atan(1)", PI / 4, "0.7854"),
        ("s9", "atan2(-1 ohm, -1 ohm)", -3 * PI / 4, "-2.3562"),
        ("s10", "abs(3 ohm + 4j ohm)", 5.0, "5.000 ohm"),
        ("s11", "arg(Vs)", PI / 3, "1.0472"),
        ("s12", "re(Vs)", Vs.real, "1.000 V"),
        ("s13", "im(Vs)", Vs.imag, "1.7321 V"),
        ("s14", "conj(3 ohm + 4j ohm)", 3 - 4j, "3.000 - 4.000j ohm"),
        ("s15", "polar(5 V, -30 deg)", 5 * cmath.exp(-1j * PI / 6), "4.3301 - 2.5000j V"),
        ("s16", "db(10)", 20.0, "20.000"),
        ("s17", "R1 || R2", 80.0, "80.00 ohm"),
        ("s18", "R1*2 || R2", 400 / 3, "133.33 ohm"),  # a*b || c is (a*b) || c
        ("s19", "-2^2", -4.0, "-4.000"),  # ^ binds tighter than unary minus
        ("s20", "2**3", 8.0, "8.000"),
        ("s21", "1/2.5 kHz", 0.4e-3, "0.4000 ms"),  # a number and its unit bind as one value
        ("s22", "j*w*L1", 1j * w * 1e-3, "6.2832j ohm"),
        ("s23", "2*pi*f", w, "6283.19 rad/s"),
        ("s24", "Vs", Vs, "1.0000 + 1.7321j V"),
        ("s25", "4.7 kohm + 300 ohm", 5000.0, "5.000 kohm"),
        ("s26", "2.2e-6 F * 1 kohm", 2.2e-3, "2.200 ms"),
        ("s27", "1 Mohm/1 mohm", 1e9, "1.000e9"),
        ("s28", "10 µF*R1", 1e-3, "1.000 ms"),
        ("s29", "s1/2", 100.0, "100.0 ohm"),  # an earlier step: its claimed value
        ("s30", "2.16 V /_ -54.5 deg", 2.16 * cmath.exp(-1j * math.radians(54.5)), "1.2543 - 1.7585j V"),
        ("s31", "(R1 + R2) || (1/(j*w*C1))", par(500, 1 / (1j * w * 10e-6)), ""),
    ]
    z31 = rows[-1][2]
    rows[-1] = (*rows[-1][:3], c_rect(z31, 3, "ohm")[0])
    text = header("The formula language")
    text += """
[parts]
Vs = { voltage = "2 V", frequency = "1 kHz", phase = "60 deg", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "b"] }
R2 = { resistor = "400 ohm", nodes = ["b", "gnd"] }
C1 = { capacitor = "10 uF", nodes = ["b", "gnd"] }
L1 = { inductor = "1 mH", nodes = ["a", "gnd"] }
"""
    for name, formula, _, claim in rows:
        text += step(name, claim, None, formula)
    case = register("functions", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    case.checks.append(("top", top))

    def mk(name, e):
        def chk(out):
            expect_step(out, name, "agrees", complex(e))

        return chk

    for name, _, e, _ in rows:
        case.checks.append((name, mk(name, e)))


_case_functions()


# =================================================================================
# 16. a derivation with an arithmetic slip, carried into later steps
# =================================================================================
def _case_carried_arith():
    w, R, C, V, Zc, I, Vb = _rc_circuit()
    Xc = Zc.imag
    xc_s, xc_v = c_real(Xc, 2, "ohm")
    # the slip: Z written with -195.15 instead of -159.15
    z_s, z_v = "100.00 - 195.15j ohm", 100 - 195.15j
    z_true = R + 1j * Xc  # formula on true inputs
    i_author = V / z_v  # correct arithmetic on the wrong Z
    i_s, i_v = c_polar(i_author, 3, 2, "mA", 1e-3)
    p_author = abs(i_v) ** 2 * R / 2
    p_s, p_v = c_real(p_author, 2, "mW", 1e-3)
    vb_s, vb_v = c_polar(Vb, 3, 2, "V")
    P = abs(I) ** 2 * R / 2
    text = header("RC derivation with one slip") + RC_PARTS
    text += step("XC", xc_s, "reactance(C1)", "-1/(w*C1)")
    text += step("Z", z_s, None, "R1 + j*XC")
    text += step("I", i_s, "current(R1)", "Vs/Z")
    text += step("P", p_s, "power(R1)", "abs(I)^2*R1/2")
    text += step("Vb", vb_s, "voltage(b)")
    text += step("Vb2", vb_s, "voltage(b)", "Vs*j*XC/(R1 + j*XC)")
    case = register("carried_arith", text)

    def top(out):
        expect_top(out, ok=False, first="Z", rc=1)

    def steps(d):
        expect_step(d, "XC", "agrees", complex(Xc), xc_v)
        expect_step(d, "Z", "arithmetic", z_true, z_v)
        expect_step(d, "I", "carried", I, i_v, caused_by="Z")
        expect_step(d, "Vb", "agrees", Vb, vb_v)
        expect_step(d, "Vb2", "agrees", Vb, vb_v)

    def chain(out):
        # P's wrong input is I, which only carries Z's slip; DESIGN.md: "caused_by names that step"
        expect_step(out, "P", "carried", complex(P), p_v, caused_by_any=("I", "Z"))

    case.checks += [("top", top), ("steps", steps), ("chain", chain)]


_case_carried_arith()


# =================================================================================
# 17. a wrong formula (hertz for rad/s) carried; a prefix slip in arithmetic
# =================================================================================
def _case_carried_formula():
    f = 50.0
    w = 2 * PI * f
    R, L, V = 10.0, 0.1, 5.0
    XL = w * L
    xl_author = f * L  # 5 ohm
    z_author = R + 1j * xl_author
    i_author = V / z_author
    I = V / (R + 1j * XL)
    i_s, i_v = c_polar(i_author, 2, 2, "mA", 1e-3)
    text = header("RL derivation with a wrong formula")
    text += """
[parts]
Vs = { voltage = "5 V", frequency = "50 Hz", nodes = ["a", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["a", "b"] }
L1 = { inductor = "100 mH", nodes = ["b", "gnd"] }
"""
    text += step("XL", "5.000 ohm", "reactance(L1)", "f*L1")
    text += step("Z", "10.000 + 5.000j ohm", None, "R1 + j*XL")
    text += step("I", i_s, "current(L1)", "Vs/Z")
    text += step("w1", "314.16 rad/s", None, "2*pi*f")
    text += step("XLw", "31.416 kohm", "reactance(L1)", "w1*L1")
    case = register("carried_formula", text)

    def top(out):
        expect_top(out, ok=False, first="XL", rc=1)

    def steps(d):
        expect_step(d, "XL", "formula", complex(XL), 5.0 + 0j, diag=("hertz-as-angular",))
        expect_step(d, "Z", "carried", R + 1j * XL, 10 + 5j, caused_by="XL")
        expect_step(d, "w1", "agrees", complex(w), 314.16 + 0j)

    def carried_i(out):
        expect_step(out, "I", "carried", I, i_v, caused_by_any=("Z", "XL"))

    def prefix_arith(out):
        # the formula on true inputs is the quantity; the author's number is 1000x its own formula
        expect_step(out, "XLw", "arithmetic", complex(XL), 31416.0 + 0j, diag=("prefix",))

    case.checks += [("top", top), ("steps", steps), ("carried_I", carried_i), ("prefix_arith", prefix_arith)]


_case_carried_formula()


# =================================================================================
# 18. unit verdicts
# =================================================================================
def _case_units():
    text = header("Dimension slips")
    text += """
[parts]
Vs = { voltage = "1 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
C1 = { capacitor = "47 nF", nodes = ["b", "gnd"] }
"""
    text += step("ok1", "47.0 us", None, "R1*C1")
    text += step("tau", "0.47 ms", None, "R1/C1")
    text += step("Vb", "0.5 A", "voltage(b)")
    text += step("P", "2 V", "power(R1)")
    text += step("Xc", "-3.386 kohm", "reactance(C1)", "-1/(w*C1*R1)")
    case = register("units", text)

    def top(out):
        expect_top(out, ok=False, first="tau", rc=1)

    def steps(d):
        expect_step(d, "ok1", "agrees", complex(47e-6), 47e-6 + 0j)
        for k in ("tau", "Vb", "P", "Xc"):
            expect_verdict(d, k, "unit")

    case.checks += [("top", top), ("steps", steps)]


_case_units()


# =================================================================================
# 19. unchecked steps do not spoil ok
# =================================================================================
def _case_unchecked():
    text = header("Notes with unchecked numbers")
    text += """
[parts]
Vs = { voltage = "3 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1.5 kohm", nodes = ["a", "gnd"] }
"""
    text += step("fc", "339 Hz")
    text += step("g", "3*exp(-t/1 ms) V")
    text += step("I", "2.000 mA", "current(R1)", "Vs/R1")
    case = register("unchecked_ok", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_verdict(d, "fc", "unchecked", caused_by=None)
        expect_verdict(d, "g", "unchecked")
        expect_step(d, "I", "agrees", 2e-3 + 0j, 2e-3 + 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_unchecked()


# =================================================================================
# 20. tolerance as a percentage, worksheet default and step overrides
# =================================================================================
def _case_tol_percent():
    w, R, C, V, Zc, I, Vb = _rc_circuit()
    Xc = Zc.imag
    ang = math.degrees(cmath.phase(Vb))
    d1 = c_polar_deg(abs(Vb), ang + 0.2, 4, 2, "V")  # |error| = 2 sin(0.1 deg) = 0.35 %
    d2 = c_polar_deg(abs(Vb), ang + 0.4, 4, 2, "V")  # 0.70 %
    text = header("Percent tolerance", 'tolerance = "0.5%"') + RC_PARTS
    text += step("a", "-159.9 ohm", "reactance(C1)")  # 0.47 %
    text += step("b", "-160.2 ohm", "reactance(C1)")  # 0.66 %
    text += step("c", "-160.2 ohm", "reactance(C1)", tolerance="1%")
    text += step("d1", d1[0], "voltage(b)")
    text += step("d2", d2[0], "voltage(b)")
    text += step("e1", "-159.2 ohm", "reactance(C1)", tolerance="digits")  # off 0.045 < 0.05
    text += step("e2", "-159.3 ohm", "reactance(C1)", tolerance="digits")  # off 0.145 > 0.05, but 0.09 %
    case = register("tol_percent", text)

    def top(out):
        expect_top(out, ok=False, first="b", rc=1)

    def steps(d):
        Xcc = complex(Xc)
        expect_step(d, "a", "agrees", Xcc, -159.9 + 0j)
        expect_step(d, "b", "differs", Xcc, -160.2 + 0j)
        expect_step(d, "c", "agrees", Xcc, -160.2 + 0j)
        expect_step(d, "d1", "agrees", Vb, d1[1])
        expect_step(d, "d2", "differs", Vb, d2[1])
        expect_step(d, "e1", "agrees", Xcc, -159.2 + 0j)
        expect_step(d, "e2", "differs", Xcc, -159.3 + 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_tol_percent()


# =================================================================================
# 21. tolerance "digits" (the default): half a unit in the last digit written
# =================================================================================
def _case_tol_digits():
    w, R, C, V, Zc, I, Vb = _rc_circuit()
    Xc = Zc.imag  # -159.1549...
    Zab = par(R, Zc)
    zr = float(f"{Zab.real:.2f}")
    zi = float(f"{Zab.imag:.2f}")
    mag = float(f"{abs(Vb):.3f}")
    ang = float(f"{math.degrees(cmath.phase(Vb)):.2f}")
    ir = c_polar(10 / (100 - 159j), 3, 2, "mA", 1e-3)
    assert abs(abs(ir[1]) - abs(I)) > 1e-5  # beyond the claim's own digits
    text = header("Digits tolerance") + RC_PARTS
    text += step("a", "-159.15 ohm", "reactance(C1)")  # off 0.0049 < 0.005
    text += step("b", "-159.16 ohm", "reactance(C1)")  # off 0.0051 > 0.005
    text += step("c", "-159 ohm", "reactance(C1)")  # off 0.155 < 0.5
    text += step("d", "-160 ohm", "reactance(C1)")  # off 0.845 > 0.5
    text += step("e", "-0.15915 kohm", "reactance(C1)")  # half unit = 0.005 ohm
    text += step("g", "-1.5915e2 ohm", "reactance(C1)")
    text += step("z1", f"{zr:.2f} - {abs(zi):.2f}j ohm", "impedance(a, b)")
    text += step("z2", f"{zr:.2f} - {abs(zi) + 0.06:.2f}j ohm", "impedance(a, b)")  # imag part off 0.06
    text += step("p1", f"{mag:.3f} V ∠ {ang:.2f} deg", "voltage(b)")
    text += step("p2", f"{mag:.3f} V ∠ {ang + 0.06:.2f} deg", "voltage(b)")  # angle off > 0.005 deg
    # XCr agrees to its 3 digits; Ir is exact arithmetic on it, so off the truth only by that rounding
    text += step("XCr", "-159 ohm", "reactance(C1)")
    text += step("Ir", ir[0], "current(R1)", "Vs/(R1 + j*XCr)")
    case = register("tol_digits", text)

    def top(out):
        expect_top(out, ok=False, first="b", rc=1)

    def steps(d):
        Xcc = complex(Xc)
        for k, v, verdict in [
            ("a", -159.15, "agrees"),
            ("b", -159.16, "differs"),
            ("c", -159.0, "agrees"),
            ("d", -160.0, "differs"),
            ("e", -159.15, "agrees"),
            ("g", -159.15, "agrees"),
        ]:
            expect_step(d, k, verdict, Xcc, complex(v))
        expect_step(d, "z1", "agrees", Zab, complex(zr, zi))
        expect_step(d, "z2", "differs", Zab, complex(zr, zi - 0.06))
        expect_step(d, "p1", "agrees", Vb, mag * cmath.exp(1j * math.radians(ang)))
        expect_step(d, "p2", "differs", Vb, mag * cmath.exp(1j * math.radians(ang + 0.06)))

    def rounded_inputs(out):
        # docs/worksheet.md, Tolerances: still agrees when only earlier rounded numbers that agree explain it
        expect_step(out, "XCr", "agrees", complex(Xc), -159 + 0j)
        expect_step(out, "Ir", "agrees", I, ir[1])

    case.checks += [("top", top), ("steps", steps), ("rounded_inputs", rounded_inputs)]


_case_tol_digits()


# =================================================================================
# 22. sinusoidal current source (rms written, peak phasors), worksheet frequency in Hz
# =================================================================================
def _case_isource():
    w = 2 * PI * 2000
    Is = 4e-3 * SQ2 * cmath.exp(-1j * math.radians(20))  # "4 mA rms" -> peak phasor
    R1, L1, R2 = 1000.0, 50e-3, 500.0
    Zbr = 1j * w * L1 + R2
    Za = par(R1, Zbr)
    Va = Is * Za
    IL = Va / Zbr
    Ya = 1 / R1 + 1 / Zbr  # Is open (test-source method)
    Zab = par(1j * w * L1, R1 + R2)  # between a and b: L1 in parallel with R1 + R2 through gnd
    S_is = (-Va) * Is.conjugate() / 2  # voltage v(gnd) - v(a), current gnd -> a through Is
    cl = {
        "Va": c_polar(Va, 4, 2, "V"),
        "IL": c_polar(IL, 4, 2, "mA", 1e-3),
        "Ya": c_rect(Ya, 4, "mS", 1e-3),
        "Rab": c_real(Zab.real, 2, "ohm"),
        "Xab": c_real(Zab.imag, 2, "ohm"),
        "Zab": c_polar(Zab, 2, 2, "ohm", sym="/_"),
        "Zabr": (
            f"{abs(Zab):.2f} ohm /_ {cmath.phase(Zab):.4f} rad",
            float(f"{abs(Zab):.2f}") * cmath.exp(1j * float(f"{cmath.phase(Zab):.4f}")),
        ),
        "Pis": c_real(S_is.real, 3, "mW", 1e-3),
        "pf": c_real(abs(S_is.real) / abs(S_is), 4),
        "Q": c_real(S_is.imag, 3, "mvar", 1e-3),
    }
    text = header("Current-driven RL network", 'frequency = "2 kHz"')
    text += """
[parts]
Is = { current = "4 mA rms", frequency = "2 kHz", phase = "-20 deg", nodes = ["gnd", "a"] }
R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }
L1 = { inductor = "50 mH", nodes = ["a", "b"] }
R2 = { resistor = "500 ohm", nodes = ["b", "gnd"] }
"""
    text += step("Va", cl["Va"][0], "voltage(a)", "Is*(R1 || (j*w*L1 + R2))")
    text += step("IL", cl["IL"][0], "current(L1)", "Va/(j*w*L1 + R2)")
    text += step("Ya", cl["Ya"][0], "admittance(a)")
    text += step("Rab", cl["Rab"][0], "resistance(a, b)")
    text += step("Xab", cl["Xab"][0], "reactance(a, b)")
    text += step("Zab", cl["Zab"][0], "impedance(a, b)", "(j*w*L1) || (R1 + R2)")
    text += step("Zabr", cl["Zabr"][0], "impedance(a, b)")
    text += step("Pis", cl["Pis"][0], "power(Is)")
    text += step("pf", cl["pf"][0], "power_factor(Is)")
    text += step("Q", cl["Q"][0], "reactive_power(Is)")
    case = register("isource_ac", text)
    exp = {
        "Va": Va,
        "IL": IL,
        "Ya": Ya,
        "Rab": Zab.real,
        "Xab": Zab.imag,
        "Zab": Zab,
        "Zabr": Zab,
        "Pis": S_is.real,
        "pf": abs(S_is.real) / abs(S_is),
        "Q": S_is.imag,
    }

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in exp.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_isource()


# =================================================================================
# 23. a passive network with no source at all: frequency from [worksheet] only
# =================================================================================
def _case_passive():
    w = 2 * PI * 1e4
    Zb = 50 + 1j * w * 1e-3
    Zc = 1 / (1j * w * 100e-9)
    Zin = par(Zb, Zc)  # R1 + L1 in parallel with C1 (textbook)
    Yim = 1 / par(50, 1j * w * 1e-3 + Zc)  # between in and m: R1 || (L1 + C1 through gnd)
    cl = {
        "Z": c_rect(Zin, 2, "ohm"),
        "Zp": c_polar(Zin, 2, 2, "ohm"),
        "Y": c_rect(Yim, 3, "mS", 1e-3),
        "Q": c_real(Zin.imag / Zin.real, 4),
    }
    text = header("Matching network, no source", 'frequency = "10 kHz"')
    text += """
[parts]
R1 = { resistor = "50 ohm", nodes = ["in", "m"] }
L1 = { inductor = "1 mH", nodes = ["m", "gnd"] }
C1 = { capacitor = "100 nF", nodes = ["in", "gnd"] }
"""
    text += step("Z", cl["Z"][0], "impedance(in)", "(R1 + j*w*L1) || (1/(j*w*C1))")
    text += step("Zp", cl["Zp"][0], "impedance(in, gnd)")
    text += step("Y", cl["Y"][0], "admittance(in, m)")
    text += step("Q", cl["Q"][0], None, "im(Z)/re(Z)")
    case = register("passive_nosource", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        for k, e in {"Z": Zin, "Zp": Zin, "Y": Yim, "Q": Zin.imag / Zin.real}.items():
            expect_step(out, k, "agrees", complex(e), cl[k][1])

    case.checks += [("top", top), ("steps", steps)]


_case_passive()


# =================================================================================
# 24. the impedance looking into a one-port: a series R-L branch from p to gnd
# =================================================================================
def _case_oneport():
    w = 2 * PI * 50e3
    Z = 30 + 1j * w * 5e-6  # series R + jwL (textbook)
    cl = {"Z": c_rect(Z, 3, "ohm"), "Y": c_rect(1 / Z, 4, "mS", 1e-3)}
    text = header("Input impedance of a one-port", 'frequency = "50 kHz"')
    text += """
[parts]
Rz = { resistor = "30 ohm", nodes = ["p", "q"] }
Lz = { inductor = "5 uH", nodes = ["q", "gnd"] }
"""
    text += step("Z", cl["Z"][0], "impedance(p)", "Rz + j*w*Lz")
    text += step("Y", cl["Y"][0], "admittance(p)")
    case = register("oneport", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(out):
        expect_step(out, "Z", "agrees", Z, cl["Z"][1])
        expect_step(out, "Y", "agrees", 1 / Z, cl["Y"][1])

    case.checks += [("top", top), ("steps", steps)]


_case_oneport()


# =================================================================================
# transients
# =================================================================================
def _case_tr_rc_rest():
    V, R, C = 5.0, 10e3, 100e-9
    tau = R * C  # 1 ms (textbook first order)
    v2 = V * (1 - math.exp(-2e-3 / tau))
    ic1 = V / R * math.exp(-1e-3 / tau)
    text = header("Power-up RC, from rest")
    text += """
[parts]
Vdd = { voltage = "5 V", nodes = ["vdd", "gnd"] }
R1 = { resistor = "10 kohm", nodes = ["vdd", "out"] }
C1 = { capacitor = "100 nF", nodes = ["out", "gnd"] }

[transient]
start = "rest"
"""
    text += step("tau", "1.000 ms", "time_constant", "R1*C1")
    text += step("tau2", "1.0 ms", "time_constant()")
    text += step("v2", f"{v2:.4f} V", 'at(voltage(out), "2 ms")', "Vdd*(1 - exp(-2 ms/tau))")
    text += step("i0", "0.500 mA", "initial(current(R1))", "Vdd/R1")
    text += step("v0", "0 V", "initial(voltage(out))")
    text += step("vf", "5.000 V", "final(voltage(out))")
    text += step("ic1", f"{ic1 * 1e3:.5f} mA", "at(current(C1), 1 ms)")
    text += step("vt", "5*(1 - exp(-t/1 ms)) V", "voltage(out)")
    case = register("tr_rc_rest", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "tau", "agrees", complex(tau), 1e-3 + 0j)
        expect_step(d, "tau2", "agrees", complex(tau), 1e-3 + 0j)
        expect_step(d, "v2", "agrees", complex(v2), float(f"{v2:.4f}") + 0j)
        expect_step(d, "i0", "agrees", complex(V / R), 0.5e-3 + 0j)
        expect_step(d, "v0", "agrees")
        expect_step(d, "vf", "agrees", complex(V), 5.0 + 0j)
        expect_step(d, "ic1", "agrees", complex(ic1), float(f"{ic1 * 1e3:.5f}") * 1e-3 + 0j)
        expect_verdict(d, "vt", "agrees")

    case.checks += [("top", top), ("steps", steps)]


_case_tr_rc_rest()


def _case_tr_initial():
    # RL charging from an initial current; two capacitor islands discharging from rest
    tau_l = 50e-3 / 100  # 0.5 ms
    iL05 = 0.1 - 0.08 * math.exp(-1)  # i = 0.1 + (0.02 - 0.1) e^(-t/tau) (textbook)
    vx10 = 5 * math.exp(-1)  # 5 V initial, tau = 10 ms
    from scipy.linalg import expm

    # coupled coils, each shorted by a resistor: [L1 M; M L2] di/dt = -diag(Rp, Rq) i,
    # currents continuous at t = 0 (textbook state equations), solved with scipy's expm
    Lmat = np.array([[10e-3, 10e-3], [10e-3, 40e-3]])
    icp = expm(-np.linalg.solve(Lmat, np.diag([10.0, 40.0])) * 0.5e-3) @ np.array([10e-3, 0.0])
    # non-inverting stage, 1 V step: 1 + (R2/R1)(1 - exp(-t/(R2 C2))), 1 V at t = 0+ (textbook)
    vo9 = 1 + 9 * (1 - math.exp(-1))
    text = header("Initial conditions from rest")
    text += """
[parts]
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "b"] }
L1 = { inductor = "50 mH", nodes = ["b", "gnd"], initial = "20 mA" }
C1 = { capacitor = "10 uF", nodes = ["x", "gnd"], initial = "5 V" }
Rx = { resistor = "1 kohm", nodes = ["x", "gnd"] }
C2 = { capacitor = "10 uF", nodes = ["gnd", "y"], initial = "2 V" }
Ry = { resistor = "1 kohm", nodes = ["y", "gnd"] }
Lm = { inductor = "10 mH", nodes = ["p", "gnd"], initial = "10 mA" }
Ln = { inductor = "40 mH", nodes = ["q", "gnd"] }
mutual_mn = { coupling = "0.5", inductors = ["Lm", "Ln"] }
Rp = { resistor = "10 ohm", nodes = ["p", "gnd"] }
Rq = { resistor = "40 ohm", nodes = ["q", "gnd"] }
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
U1 = { opamp = "ideal", nodes = ["out", "in", "m"] }
R5 = { resistor = "1 kohm", nodes = ["m", "gnd"] }
R6 = { resistor = "9 kohm", nodes = ["out", "m"] }
C6 = { capacitor = "1 nF", nodes = ["out", "m"] }

[transient]
start = "rest"
"""
    text += step("i0", "20.0 mA", "initial(current(L1))")
    text += step("vL0", "8.00 V", "initial(voltage(L1))", "Vs - R1*i0")
    text += step("i05", f"{iL05 * 1e3:.3f} mA", "at(current(L1), 0.5 ms)")
    text += step("if", "100.0 mA", "final(current(L1))", "Vs/R1")
    text += step("igood", "0.1 - 0.08*exp(-t/0.5 ms) A", "current(L1)")
    text += step("vx0", "5.00 V", "initial(voltage(x))")
    text += step("vx10", f"{vx10:.4f} V", "at(voltage(x), 10 ms)")
    text += step("ic0", "-5.00 mA", "initial(current(C1))")
    text += step("vy0", "-2.00 V", "initial(voltage(y))")
    text += step("ip05", f"{icp[0] * 1e3:.4f} mA", 'at(current(Lm), "0.5 ms")')
    text += step("iq05", f"{icp[1] * 1e3:.4f} mA", 'at(current(Ln), "0.5 ms")')
    text += step("iq0", "0 mA", "initial(current(Ln))")
    text += step("vo0", "1.000 V", "initial(voltage(out))")
    text += step("vo9", f"{vo9:.4f} V", 'at(voltage(out), "9 us")')
    text += step("ibad", "0.1*(1 - exp(-t/0.5 ms)) A", "current(L1)")
    case = register("tr_initial", text)

    def top(out):
        expect_top(out, ok=False, first="ibad", rc=1)

    def steps(d):
        expect_step(d, "i0", "agrees", 20e-3 + 0j, 20e-3 + 0j)
        expect_step(d, "vL0", "agrees", 8 + 0j, 8 + 0j)
        expect_step(d, "i05", "agrees", complex(iL05), float(f"{iL05 * 1e3:.3f}") * 1e-3 + 0j)
        expect_step(d, "if", "agrees", 0.1 + 0j, 0.1 + 0j)
        expect_verdict(d, "igood", "agrees")
        expect_step(d, "vx0", "agrees", 5 + 0j, 5 + 0j)
        expect_step(d, "vx10", "agrees", complex(vx10), float(f"{vx10:.4f}") + 0j)
        expect_step(d, "ic0", "agrees", -5e-3 + 0j, -5e-3 + 0j)
        expect_step(d, "vy0", "agrees", -2 + 0j, -2 + 0j)
        expect_verdict(d, "ibad", "differs")
        expect_step(d, "ip05", "agrees", complex(icp[0]), float(f"{icp[0] * 1e3:.4f}") * 1e-3 + 0j)
        expect_step(d, "iq05", "agrees", complex(icp[1]), float(f"{icp[1] * 1e3:.4f}") * 1e-3 + 0j)
        expect_step(d, "iq0", "agrees")
        expect_step(d, "vo0", "agrees", 1 + 0j, 1 + 0j)
        expect_step(d, "vo9", "agrees", complex(vo9), float(f"{vo9:.4f}") + 0j)
        assert tau_l == 0.5e-3

    case.checks += [("top", top), ("steps", steps)]


_case_tr_initial()


def _rlc_step(R, L, C, V, t):
    """Series RLC, step V from rest: capacitor voltage and loop current (textbook)."""
    a = R / (2 * L)
    wn = 1 / math.sqrt(L * C)
    p = np.roots([1.0, 2 * a, wn**2]).astype(complex)
    p1, p2 = p[0], p[1]
    # vC = V [1 + (p2 e^{p1 t} - p1 e^{p2 t})/(p1 - p2)], i = C dvC/dt
    vc = V * (1 + (p2 * np.exp(p1 * t) - p1 * np.exp(p2 * t)) / (p1 - p2))
    i = C * V * (p1 * p2 * np.exp(p1 * t) - p1 * p2 * np.exp(p2 * t)) / (p1 - p2)
    return vc.real, i.real, p1, p2


def _case_tr_rlc_under():
    R, L, C, V = 20.0, 10e-3, 1e-6, 10.0
    wn = 1 / math.sqrt(L * C)  # 1e4 rad/s
    zeta = R / 2 * math.sqrt(C / L)  # 0.1
    Q = 1 / (2 * zeta)
    tc = 1 / (zeta * wn)  # underdamped: 1/(zeta wn) (docs/transients.md)
    peak = V * (1 + math.exp(-PI * zeta / math.sqrt(1 - zeta**2)))  # textbook overshoot
    v01, i01, _, _ = _rlc_step(R, L, C, V, 1e-4)
    wd = wn * math.sqrt(1 - zeta**2)
    # cross-check of the closed form used above: i = V/(L wd) e^{-a t} sin(wd t)
    assert math.isclose(i01, V / (L * wd) * math.exp(-zeta * wn * 1e-4) * math.sin(wd * 1e-4), rel_tol=1e-9)
    text = header("Series RLC step, underdamped")
    text += """
[parts]
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "20 ohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "c"] }
C1 = { capacitor = "1 uF", nodes = ["c", "gnd"] }

[transient]
start = "rest"
"""
    text += step("wn", "10000 rad/s", "natural_frequency", "1/sqrt(L1*C1)")
    text += step("zeta", "0.1000", "damping_ratio", "R1/2*sqrt(C1/L1)")
    text += step("Q", "5.000", "quality_factor", "1/(2*zeta)")
    text += step("tc", "1.000 ms", "time_constant", "1/(zeta*wn)")
    text += step("pk", f"{peak:.3f} V", "peak(voltage(c))")
    text += step("v01", f"{v01:.4f} V", 'at(voltage(c), "0.1 ms")')
    text += step("i01", f"{i01 * 1e3:.3f} mA", 'at(current(L1), "0.1 ms")')
    text += step("vL0", "10.00 V", "initial(voltage(L1))")
    text += step("vcf", "10.00 V", "final(voltage(c))")
    text += step("wnhz", f"{wn / (2 * PI):.1f} Hz", "natural_frequency")
    case = register("tr_rlc_under", text)

    def top(out):
        expect_top(out, ok=False, first="wnhz", rc=1)

    def steps(d):
        expect_step(d, "wn", "agrees", complex(wn), 1e4 + 0j)
        expect_step(d, "zeta", "agrees", complex(zeta), 0.1 + 0j)
        expect_step(d, "Q", "agrees", complex(Q), 5 + 0j)
        expect_step(d, "tc", "agrees", complex(tc), 1e-3 + 0j)
        expect_step(d, "pk", "agrees", complex(peak), float(f"{peak:.3f}") + 0j)
        expect_step(d, "v01", "agrees", complex(v01), float(f"{v01:.4f}") + 0j)
        expect_step(d, "i01", "agrees", complex(i01), float(f"{i01 * 1e3:.3f}") * 1e-3 + 0j)
        expect_step(d, "vL0", "agrees", 10 + 0j, 10 + 0j)
        expect_step(d, "vcf", "agrees", 10 + 0j, 10 + 0j)

    def hz(out):
        expect_step(out, "wnhz", "differs", complex(wn), float(f"{wn / (2 * PI):.1f}") + 0j, diag=("hertz-as-angular",))

    case.checks += [("top", top), ("steps", steps), ("hertz_as_angular", hz)]


_case_tr_rlc_under()


def _case_tr_rlc_over():
    R, L, C, V = 500.0, 10e-3, 1e-6, 10.0
    wn = 1 / math.sqrt(L * C)
    zeta = R / 2 * math.sqrt(C / L)  # 2.5
    v1, _, p1, p2 = _rlc_step(R, L, C, V, 1e-3)
    slow = max(p1.real, p2.real)  # the pole nearer the origin
    tc = -1 / slow
    assert math.isclose(math.sqrt((p1 * p2).real), wn, rel_tol=1e-12)
    text = header("Series RLC step, overdamped")
    text += """
[parts]
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "500 ohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "c"] }
C1 = { capacitor = "1 uF", nodes = ["c", "gnd"] }
"""
    text += step("tc", f"{tc * 1e3:.4f} ms", "time_constant")
    text += step("wn", "10000.0 rad/s", "natural_frequency()")
    text += step("zeta", "2.500", "damping_ratio()")
    text += step("Q", "0.2000", "quality_factor()")
    text += step("v1", f"{v1:.4f} V", "at(voltage(c), 1 ms)")
    case = register("tr_rlc_over", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "tc", "agrees", complex(tc), float(f"{tc * 1e3:.4f}") * 1e-3 + 0j)
        expect_step(d, "wn", "agrees", complex(wn), 1e4 + 0j)
        expect_step(d, "zeta", "agrees", complex(zeta), 2.5 + 0j)
        expect_step(d, "Q", "agrees", complex(1 / (2 * zeta)), 0.2 + 0j)
        expect_step(d, "v1", "agrees", complex(v1), float(f"{v1:.4f}") + 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_tr_rlc_over()


def _case_tr_steady_opens():
    # before t = 0: S1 closed, v(b) = 12*2k/3k = 8 V (divider); after: C1 discharges through R2
    tau = 2e3 * 1e-6
    v2 = 8 * math.exp(-2e-3 / tau)
    text = header("Supply disconnect, hold-up capacitor")
    text += """
[parts]
Vs = { voltage = "12 V", nodes = ["a", "gnd"] }
S1 = { switch = "opens", nodes = ["a", "x"] }
R1 = { resistor = "1 kohm", nodes = ["x", "b"] }
C1 = { capacitor = "1 uF", nodes = ["b", "gnd"] }
R2 = { resistor = "2 kohm", nodes = ["b", "gnd"] }

[transient]
start = "steady"
"""
    text += step("v0", "8.000 V", "initial(voltage(b))", "Vs*R2/(R1 + R2)")
    text += step("v2", f"{v2:.4f} V", 'at(voltage(b), "2 ms")', "v0*exp(-1)")
    text += step("i0", "4.000 mA", "initial(current(R2))")
    text += step("iR1", "0 A", "initial(current(R1))")
    text += step("tc", "2.000 ms", "time_constant", "R2*C1")
    text += step("vt", "8*exp(-t/2 ms) V", "voltage(b)")
    case = register("tr_steady_opens", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "v0", "agrees", 8 + 0j, 8 + 0j)
        expect_step(d, "v2", "agrees", complex(v2), float(f"{v2:.4f}") + 0j)
        expect_step(d, "i0", "agrees", 4e-3 + 0j, 4e-3 + 0j)
        expect_step(d, "iR1", "agrees")
        expect_step(d, "tc", "agrees", complex(tau), 2e-3 + 0j)
        expect_verdict(d, "vt", "agrees")

    case.checks += [("top", top), ("steps", steps)]


_case_tr_steady_opens()


def _case_tr_steady_closes():
    # before: 10 V over 2 kohm, i = 5 mA; S2 shorts R2 at t = 0: final 10 mA, tau = L/R1 = 0.1 ms
    i01 = 10e-3 - 5e-3 * math.exp(-1)
    text = header("Bypass switch closes on an RL load")
    text += """
[parts]
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
R2 = { resistor = "1 kohm", nodes = ["b", "c"] }
S2 = { switch = "closes", nodes = ["b", "c"] }
L1 = { inductor = "100 mH", nodes = ["c", "gnd"] }

[transient]
start = "steady"
"""
    text += step("i0", "5.000 mA", "initial(current(L1))")
    text += step("vL0", "5.000 V", "initial(voltage(L1))")
    text += step("i01", f"{i01 * 1e3:.4f} mA", "at(current(L1), 0.1 ms)")
    text += step("if", "10.000 mA", "final(current(L1))")
    text += step("tc", "0.1000 ms", "time_constant", "L1/R1")
    case = register("tr_steady_closes", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "i0", "agrees", 5e-3 + 0j, 5e-3 + 0j)
        expect_step(d, "vL0", "agrees", 5 + 0j, 5 + 0j)
        expect_step(d, "i01", "agrees", complex(i01), float(f"{i01 * 1e3:.4f}") * 1e-3 + 0j)
        expect_step(d, "if", "agrees", 10e-3 + 0j, 10e-3 + 0j)
        expect_step(d, "tc", "agrees", 1e-4 + 0j, 1e-4 + 0j)

    case.checks += [("top", top), ("steps", steps)]


_case_tr_steady_closes()


def _rc_sine(phase_deg: float):
    f = 200.0
    w = 2 * PI * f
    tau = 1e-3
    Vsrc = 10 * cmath.exp(1j * math.radians(phase_deg))
    Vp = Vsrc / (1 + 1j * w * tau)  # textbook RC divider
    Ic = Vp * 1j * w * 1e-6
    return w, tau, Vp, Ic


def _case_tr_steady_sine():
    w, tau, Vp, Ic = _rc_sine(30.0)
    at13 = (Vp * cmath.exp(1j * w * 1.3e-3)).real  # steady state for all t
    text = header("RC in sinusoidal steady state")
    text += """
[parts]
Vs = { voltage = "10 V", frequency = "200 Hz", phase = "30 deg", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
C1 = { capacitor = "1 uF", nodes = ["b", "gnd"] }

[transient]
start = "steady"
"""
    v0 = c_real(Vp.real, 4, "V")
    a13 = c_real(at13, 4, "V")
    vf = c_polar(Vp, 4, 2, "V")
    ic0 = c_real(Ic.real, 4, "mA", 1e-3)
    text += step("v0", v0[0], "initial(voltage(b))")
    text += step("a13", a13[0], 'at(voltage(b), "1.3 ms")')
    text += step("vf", vf[0], "final(voltage(b))")
    text += step("ic0", ic0[0], "initial(current(C1))")
    text += step("pk", c_real(abs(Vp), 4, "V")[0], "peak(voltage(b))")
    case = register("tr_steady_sine", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "v0", "agrees", complex(Vp.real), v0[1])
        expect_step(d, "a13", "agrees", complex(at13), a13[1])
        expect_step(d, "vf", "agrees", Vp, vf[1])
        expect_step(d, "ic0", "agrees", complex(Ic.real), ic0[1])
        expect_step(d, "pk", "agrees", complex(abs(Vp)), c_real(abs(Vp), 4, "V")[1])

    case.checks += [("top", top), ("steps", steps)]


_case_tr_steady_sine()


def _case_tr_rest_sine():
    from scipy.optimize import minimize_scalar

    w, tau, Vp, Ic = _rc_sine(0.0)

    def v(t):
        # switched on at rest: steady part minus its value at 0 decaying with tau (textbook)
        return (Vp * np.exp(1j * w * t)).real - Vp.real * np.exp(-t / tau)

    t = np.linspace(1e-9, 20 * tau, 400001)
    k = int(np.argmax(np.abs(v(t))))
    res = minimize_scalar(lambda x: -abs(v(x)), bounds=(t[k - 5], t[k + 5]), method="bounded", options={"xatol": 1e-14})
    peak = float(v(res.x))
    a25 = float(v(2.5e-3))
    amp, ph = abs(Vp), cmath.phase(Vp)
    fn = f"{amp:.4f}*cos(2*pi*200 Hz*t + ({ph:.5f})) - {Vp.real:.4f}*exp(-t/1 ms) V"
    text = header("RC switched onto a 200 Hz sine")
    text += """
[parts]
Vs = { voltage = "10 V", frequency = "200 Hz", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
C1 = { capacitor = "1 uF", nodes = ["b", "gnd"] }

[transient]
start = "rest"
"""
    pk = c_real(peak, 3, "V")
    at = c_real(a25, 4, "V")
    vf = c_polar(Vp, 4, 2, "V")
    text += step("tc", "1.000 ms", "time_constant")
    text += step("a25", at[0], 'at(voltage(b), "2.5 ms")')
    text += step("v0", "0 V", "initial(voltage(b))")
    text += step("i0", "10.00 mA", "initial(current(R1))")
    text += step("pk", pk[0], "peak(voltage(b))")
    text += step("vf", vf[0], "final(voltage(b))")
    text += step("vt", fn, "voltage(b)")
    case = register("tr_rest_sine", text)

    def top(out):
        expect_top(out, ok=True, first=None, rc=0)

    def steps(d):
        expect_step(d, "tc", "agrees", 1e-3 + 0j, 1e-3 + 0j)
        expect_step(d, "a25", "agrees", complex(a25), at[1])
        expect_step(d, "v0", "agrees")
        expect_step(d, "i0", "agrees", 10e-3 + 0j, 10e-3 + 0j)
        expect_step(d, "vf", "agrees", Vp, vf[1])
        expect_verdict(d, "vt", "agrees")

    def peak_(out):
        # peak is signed: the largest |v| for t > 0 is a negative swing here
        assert peak < 0
        expect_real(out, "pk", peak, 1e-7)
        expect_step(out, "pk", "agrees")

    case.checks += [("top", top), ("steps", steps), ("peak", peak_)]


_case_tr_rest_sine()


# =================================================================================
# malformed worksheets: exit 2, one line on stderr naming the file, no traceback
# =================================================================================
_OK_PARTS = (
    '\n[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\nR1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }\n'
)
MALFORMED.update(
    {
        "no_format": '[worksheet]\ntitle = "x"\n' + _OK_PARTS,
        "toml_syntax": header("x") + _OK_PARTS + '\n[[step]]\nname = "a"\nclaim = "1 A\n',
        "unknown_kind": header("x") + '\n[parts]\nR1 = { resistr = "1 ohm", nodes = ["a", "gnd"] }\n',
        "rms_constant": header("x")
        + '\n[parts]\nV1 = { voltage = "1 V rms", nodes = ["a", "gnd"] }\nR1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }\n',
        "unknown_node": header("x") + _OK_PARTS + step("a", "1 V", "voltage(zz)"),
        "later_step": header("x") + _OK_PARTS + step("a", "1 A", None, "b*2") + step("b", "0.5 A", None, "V1/R1"),
        "two_freqs": header("x") + '\n[parts]\nV1 = { voltage = "1 V", frequency = "50 Hz", nodes = ["a", "gnd"] }\n'
        'V2 = { voltage = "1 V", frequency = "60 Hz", nodes = ["b", "gnd"] }\nR1 = { resistor = "1 ohm", nodes = ["a", "b"] }\n'
        + step("v", "1 V", "voltage(a, b)"),
    }
)


# =================================================================================
# writing the files
# =================================================================================
def files() -> dict[str, str]:
    """Every file of ``cases/``: its name and its text."""
    out: dict[str, str] = {}
    for case in CASES.values():
        checks = {}
        for sub, record in case.checks:
            checks[sub] = []
            record(checks[sub])
        out[f"{case.name}.toml"] = case.text
        out[f"{case.name}.expect.json"] = _checks_json(checks)
    for name, text in MALFORMED.items():
        expect: dict = {"exit": 2}
        if name == "toml_syntax":
            # the unterminated string is on the last line of the file: the message names that line
            expect["line"] = len(text.splitlines())
        out[f"bad_{name}.toml"] = text
        out[f"bad_{name}.expect.json"] = _json(expect)
    return out


def _json(data: dict) -> str:
    return json.dumps(data, ensure_ascii=False) + "\n"


def _checks_json(checks: dict[str, list[dict]]) -> str:
    """``{"checks": {name: [assertion, ...]}}`` with one assertion a line, for reading and diffs."""
    groups = []
    for sub, records in checks.items():
        rows = ",\n".join("   " + json.dumps(r, ensure_ascii=False) for r in records)
        groups.append(f"  {json.dumps(sub)}: [\n{rows}\n  ]")
    return '{\n "checks": {\n' + ",\n".join(groups) + "\n }\n}\n"


def write(folder: Path) -> None:
    """Write every case into ``folder`` and remove the case files it no longer holds."""
    folder.mkdir(parents=True, exist_ok=True)
    wanted = files()
    for old in [*folder.glob("*.toml"), *folder.glob("*.expect.json")]:
        if old.name not in wanted:
            old.unlink()
    for name, text in wanted.items():
        path = folder / name
        if not path.exists() or path.read_text(encoding="utf-8") != text:
            path.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    write(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE / "cases")
