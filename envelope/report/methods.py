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
    "alamdari": "Alamdari F. and Hammond G.P. (1983), Improved data correlations for "
                "buoyancy-driven convection in rooms, Building Services Engineering Research "
                "and Technology 4, 106-112, doi:10.1177/014362448300400304.",
    "khalifa": "Khalifa A.J.N. and Marshall R.H. (1990), Validation of heat transfer "
               "coefficients on interior building surfaces using a real-sized indoor test "
               "cell, Int. J. Heat Mass Transfer 33, 2219-2236, "
               "doi:10.1016/0017-9310(90)90122-B.",
    "anderlind": "Anderlind G. (1992), Multiple regression analysis of in situ thermal "
                 "measurements - Study of an attic insulated with 800 mm loose fill "
                 "insulation, J. Thermal Insul. Build. Envelopes 16, 81-104.",
    "bre": "BRE Information Paper IP 1/06 (2006), Assessing the effects of thermal bridging "
           "at junctions and around openings.",
    "din4108": "DIN 4108-2:2013, Wärmeschutz und Energie-Einsparung in Gebäuden - Teil 2: "
               "Mindestanforderungen an den Wärmeschutz.",
    "iso10211": "ISO 10211:2017, Thermal bridges in building construction - Heat flows and "
                "surface temperatures - Detailed calculations.",
    "iso9972": "EN ISO 9972:2015, Thermal performance of buildings - Determination of air "
               "permeability of buildings - Fan pressurization method.",
    "sherman": "Sherman M.H. (1987), Estimation of infiltration from leakage and climate "
               "indicators, Energy and Buildings 10, 81-86, "
               "doi:10.1016/0378-7788(87)90008-9.",
    "okabe": "Okabe M. and Ito K. (2008), Color Universal Design (CUD): how to make figures "
             "and presentations that are friendly to colorblind people.",
}

_METHOD_TEXT = (
    ("Surface temperatures",
     "The camera's apparent temperatures are turned back into band radiance {planck} and the "
     "measurement equation of thermography W = τ ε L(T_obj) + τ (1 − ε) L(T_refl) + (1 − τ) "
     "L(T_atm) is solved with the surveyor's emissivity, reflected apparent temperature, "
     "atmosphere and transmittance, then inverted for the object temperature with a fitted "
     "Sakuma–Hattori equation {sakuma}; the Monte Carlo uses the same path. A contact probe "
     "in the view (or a survey-wide offset) removes the camera's absolute error from every "
     "pixel. An emissivity tape is combined with the declared emissivity by inverse variance "
     "and used everywhere that view's emissivity is, or refused when its contrast with the "
     "reflected temperature is too small (the note then names the view). Areas come from a "
     "homography fitted to reference points (normalised DLT {hartley}) or from one known "
     "length."),
    ("U-values",
     "Interior surface method U = [h_c (T_ai − T_si) + ε σ (T_r⁴ − T_si⁴)] / (T_ai − T_ae) "
     "[W/(m²·K)] after {fokaides} and {albatici}. By default the convective coefficient h_c "
     "is an ensemble of the correlations that fit the surface's orientation and heat-flow "
     "direction, evaluated at the measured surface–air difference and drawn in the Monte "
     "Carlo: the natural-convection correlation of {churchill}, those of {alamdari} and "
     "{khalifa}, and the conventional values of {iso6946} as one member; a surveyor may fix "
     "one model. The exterior method uses the outside surface balance with wind and sky "
     "exchange. U is reported referred to the air temperatures (what H uses) and to "
     "environmental temperatures (the definition of a design U in {iso6946}); the builder "
     "check uses the definition of the specified value. A logged night series is reduced "
     "with the average method of {iso9869}, whose convergence criteria are reported as they "
     "are, and with its dynamic method {anderlind}. The 'undisturbed' U is that of the "
     "reference zone (or the element without its defects); 'as built' is the U of the whole "
     "net area, defects included, the quantity a specified U refers to."),
    ("Uncertainty: one convention",
     "Every interval is a 95 % interval: from a seeded Monte Carlo propagation {jcgm101} "
     "over emissivity, camera offset and relative accuracy, probe, reflected and air "
     "temperatures, wind and the convection model, with the readings of one camera in one "
     "view sharing their offset; where the results hold only a standard uncertainty, as "
     "value ± 1.96 × standard uncertainty (normal distribution, {jcgm100}). Values are "
     "rounded to the place of the interval's half-width kept to one or two significant "
     "digits {pdg}. A U-value cannot be negative: an interval whose lower end reaches zero "
     "is printed '≤ upper end', and a central value at or below zero '≈ 0'. Each element's "
     "list of what would narrow its interval comes from its variance budget."),
    ("Temperature factor and risk",
     "fRsi = (T_si − T_e) / (T_i − T_e) [-] is measured per pixel on the night. The limits "
     "fRsi,min from the monthly procedure of {iso13788} (critical surface humidity 0.8 for "
     "mould, 1.0 for condensation), or a fixed national criterion such as 0.75 {bre} or 0.70 "
     "{din4108}, are defined for a factor computed with the standard internal surface "
     "resistance, Rsi 0.25 m²·K/W on opaque elements and 0.13 on glazing; the extra "
     "resistance stands for corners, furniture and curtains. The factor at this design "
     "convention is computed per pixel from the measured heat flux and the resistance behind "
     "the surface; risks of elements and defects are judged on it, and an element's risk "
     "is raised to that of its worst defect. Steady state is assumed: the night's "
     "measurements predict design conditions only as far as the night was steady."),
    ("Defects and junctions",
     "Regions whose factor lies below the element's reference level are labelled, "
     "described by shape and classified by rules whose reasons are printed. Extra heat "
     "flow is measured against the reference zone of the same image; psi [W/(m·K)] comes "
     "from the excess heat flux {ogrady} integrated across the junction, on both sides where "
     "they are in view, until the excess falls to the noise level or to the 1 m cut-off "
     "planes of {iso10211}, over one length, with internal dimensions unless stated. The "
     "incidence factor of {asdrubali} is given with the area it refers to. A junction's "
     "measured psi is checked against the specified psi or a default for its type, judged "
     "like the elements. With a blower-door result {iso9972} a leak's air is counted at "
     "natural conditions by the infiltration model of {sherman}, shared among the leaks "
     "found; without it only the conductive surface excess is counted and the leak's energy "
     "is marked as a lower bound ('at least') wherever it appears."),
    ("Heat loss and retrofit",
     "H = Σ U A + Σ ψ L + Σ χ [W/K] over the undisturbed areas and the defects, so that a "
     "defect is counted once; annual fabric loss H × HDD × 24 / 1000 [kWh], before the "
     "heating system's efficiency. Its 95 % interval comes from a joint Monte Carlo over the "
     "inputs the elements share (same camera, same air temperatures), which independent "
     "sums would understate. Measures add layers in series {iso6946}; delivered energy is "
     "the fabric saving divided by the heating efficiency; payback is cost over yearly "
     "money saved; the package applies every measure together without double counting."),
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
