"""Method notes of the auditor's report with numbered citations, and the reference list.

Each method paragraph names its sources as ``{key}``; `METHODS` holds the text with the
keys replaced by ``[n]``, numbered in order of first citation, and `REFERENCES` the list in
that order. The reports claim "after" a source where the code follows it from memory.
"""

from __future__ import annotations

import re

__all__ = ["SOURCES", "METHODS", "REFERENCES", "cite"]

SOURCES = {
    "planck": "Planck's law integrated over the camera band (Widger W.K. and Woodall M.P. "
              "(1976), Integration of the Planck blackbody radiation function, Bulletin of the "
              "American Meteorological Society 57(10), 1217-1219).",
    "sakuma": "Sakuma F. and Hattori S. (1982), Establishing a practical temperature standard "
              "by using a narrow-band radiation thermometer with a silicon detector, in "
              "Temperature: Its Measurement and Control in Science and Industry 5, 421-427.",
    "hartley": "Hartley R.I. (1997), In defense of the eight-point algorithm, IEEE Trans. "
               "Pattern Analysis and Machine Intelligence 19(6), 580-593 "
               "(normalised DLT).",
    "iso6946": "ISO 6946:2017, Building components and building elements - Thermal resistance "
               "and thermal transmittance - Calculation methods.",
    "churchill": "Churchill S.W. and Chu H.H.S. (1975), Correlating equations for laminar and "
                 "turbulent free convection from a vertical plate, Int. J. Heat Mass Transfer "
                 "18, 1323-1329, doi:10.1016/0017-9310(75)90243-4.",
    "fokaides": "Fokaides P.A. and Kalogirou S.A. (2011), Application of infrared thermography "
                "for the determination of the overall heat transfer coefficient (U-value) in "
                "building envelopes, Applied Energy 88, 4358-4365, "
                "doi:10.1016/j.apenergy.2011.05.014.",
    "albatici": "Albatici R. and Tonelli A.M. (2010), Infrared thermovision technique for the "
                "assessment of thermal transmittance value of opaque building elements on "
                "site, Energy and Buildings 42, 2177-2183, doi:10.1016/j.enbuild.2010.07.010.",
    "iso9869": "ISO 9869-1:2014, Thermal insulation - Building elements - In-situ measurement "
               "of thermal resistance and thermal transmittance - Part 1: Heat flow meter "
               "method (average method).",
    "jcgm101": "JCGM 101:2008, Evaluation of measurement data - Supplement 1 to the Guide to "
               "the expression of uncertainty in measurement - Propagation of distributions "
               "using a Monte Carlo method.",
    "jcgm100": "JCGM 100:2008, Evaluation of measurement data - Guide to the expression of "
               "uncertainty in measurement (GUM).",
    "pdg": "Particle Data Group (2022), Review of Particle Physics, Introduction, section "
           "5.3 (rounding of quoted uncertainties), Prog. Theor. Exp. Phys. 2022, 083C01.",
    "iso13788": "ISO 13788:2012, Hygrothermal performance of building components and "
                "building elements - Internal surface temperature to avoid critical surface "
                "humidity and interstitial condensation - Calculation methods.",
    "ogrady": "O'Grady M., Lechowska A.A. and Harte A.M. (2017), Infrared thermography "
              "technique as an in-situ method of assessing heat loss through thermal "
              "bridging, Energy and Buildings 135, 20-32, doi:10.1016/j.enbuild.2016.11.039.",
    "asdrubali": "Asdrubali F., Baldinelli G. and Bianchi F. (2012), A quantitative "
                 "methodology to evaluate thermal bridges in buildings, Applied Energy 97, "
                 "365-373, doi:10.1016/j.apenergy.2011.12.008.",
    "okabe": "Okabe M. and Ito K. (2008), Color Universal Design (CUD): how to make figures "
             "and presentations that are friendly to colorblind people.",
}

_METHOD_TEXT = (
    ("Surface temperatures",
     "The camera's apparent temperatures are turned back into band radiance {planck} and the "
     "measurement equation of thermography W = τ ε L(T_obj) + τ (1 − ε) L(T_refl) + (1 − τ) "
     "L(T_atm) is solved with the surveyor's emissivity, reflected apparent temperature and "
     "transmittance, then inverted for the object temperature with a fitted Sakuma–Hattori "
     "equation {sakuma}. A contact probe in the view (or a survey-wide offset) removes the "
     "camera's absolute error from every pixel. Areas come from a homography fitted to "
     "reference points (normalised DLT {hartley}) or from one known length."),
    ("U-values",
     "Interior surface method U = [h_c (T_ai − T_si) + ε σ (T_r⁴ − T_si⁴)] / (T_ai − T_ae) "
     "[W/(m²·K)] after {fokaides} and {albatici}, with the convective coefficient h_c from "
     "the conventional values of {iso6946} or the natural-convection correlation of "
     "{churchill}; exterior method from the outside surface balance with wind and sky "
     "exchange. A logged night series is reduced with the average method of {iso9869}, "
     "whose convergence criteria are reported as they are. The 'undisturbed' U is that of "
     "the reference zone (or the element without its defects); 'as built' is the U of the "
     "whole net area, defects included, the quantity a specified U refers to."),
    ("Uncertainty: one convention",
     "Every interval is a 95 % interval: from a seeded Monte Carlo propagation {jcgm101} "
     "over emissivity, camera accuracy, reflected and air temperatures, wind and the "
     "convection model; where the results hold only a standard uncertainty, as value ± "
     "1.96 × standard uncertainty (normal distribution, {jcgm100}). Values are rounded to "
     "the place of the interval's half-width kept to one or two significant digits {pdg}. "
     "A U-value cannot be negative: an interval whose lower end reaches zero is printed "
     "'≤ upper end', and a central value at or below zero '≈ 0'."),
    ("Temperature factor and risk",
     "fRsi = (T_si − T_e) / (T_i − T_e) [-] is measured per pixel on the night and compared "
     "with fRsi,min from the monthly procedure of {iso13788} (critical surface humidity 0.8 "
     "for mould, 1.0 for condensation) or a fixed national criterion. Where the results "
     "carry the factor at the design convention (Rsi 0.25 m²·K/W opaque, 0.13 glazing), "
     "that design factor is what the limits are defined for and is shown beside the "
     "measured one. Steady state is assumed: the night's factor predicts design conditions "
     "only as far as the night was steady."),
    ("Defects",
     "Regions whose factor lies below the element's reference level are labelled, "
     "described by shape and classified by rules whose reasons are printed. Extra heat "
     "flow is measured against the reference zone of the same image; psi [W/(m·K)] comes "
     "from the excess heat flux integrated across the junction {ogrady}, with the "
     "incidence factor of {asdrubali} beside it; kWh a year from heating degree-days. For "
     "air leakage only the conductive surface excess is counted: its energy is a lower "
     "bound."),
    ("Heat loss and retrofit",
     "H = Σ U A + Σ ψ L + Σ χ [W/K] over the undisturbed areas and the defects, so that a "
     "defect is counted once; annual fabric loss H × HDD × 24 / 1000 [kWh], before the "
     "heating system's efficiency. Its interval treats elements as independent, which "
     "understates errors shared between them (same camera, same air temperatures). "
     "Measures add layers in series {iso6946}; delivered energy is the fabric saving "
     "divided by the heating efficiency; payback is cost over yearly money saved; the "
     "package applies every measure together without double counting."),
    ("Figures",
     "Colour limits come from each element's own pixels (0.5 to 99.5 percentile), so no "
     "element has more than 1 % of its pixels beyond a limit; glazing, doors and warm "
     "spots are drawn on a scale of their own and an arrow on a colour bar marks values "
     "beyond its end. Temperatures use matplotlib's inferno map, factors and U viridis, "
     "the own scale cividis; categories use the colour-blind-safe palette of {okabe}."),
)


def _number() -> tuple[tuple[tuple[str, str], ...], tuple[tuple[int, str, str], ...]]:
    order: list[str] = []

    def sub(m):
        key = m.group(1)
        if key not in order:
            order.append(key)
        return f"[{order.index(key) + 1}]"

    methods = tuple((title, re.sub(r"\{(\w+)\}", sub, text)) for title, text in _METHOD_TEXT)
    refs = tuple((i + 1, key, SOURCES[key]) for i, key in enumerate(order))
    return methods, refs


METHODS, REFERENCES = _number()
"""Method paragraphs ``(title, text with [n])`` and references ``(n, key, text)``."""


def cite(key: str) -> str:
    """``[n]`` of a source cited in the methods (for use elsewhere in the report)."""
    for n, k, _ in REFERENCES:
        if k == key:
            return f"[{n}]"
    raise KeyError(key)
