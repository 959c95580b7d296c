"""Design defaults: every margin, derating and typical value the model uses.

Each constant names its source. "common practice" marks a fact of the trade;
"from memory" marks a value recalled rather than read from a document. The
engineering reference for all of them is the project's model description
(sections cited as "model s.N").
"""

from __future__ import annotations

#: Thermal voltage kT/q near room temperature [V] (physics; 25.9 mV at 300 K,
#: the trade rounds to 26 mV).
VT_V = 0.026

#: Base-drive margin k applied to the peak base current (model s.3; common practice).
BASE_DRIVE_MARGIN = 1.5

#: Bias diode forward drop when the catalogue gives none [V] (model s.3; common practice).
DIODE_DROP_V = 0.65

#: Breakdown margin: Vceo >= span * 1.2 (model s.5; common practice).
VCEO_MARGIN = 1.2

#: Samples of the load line over one cycle (model s.5: at least 360).
LOAD_LINE_SAMPLES = 720

#: Junction kept this far below its rating [K] (model s.6; common practice).
TJ_DERATE_C = 25.0

#: |dVbe/dT| of a silicon BJT [V/K] (model s.7; common practice, 2 to 2.5 mV/K).
DVBE_DT_V_K = 0.0022

#: Largest accepted thermal-runaway loop gain (model s.7; margin, common practice).
LOOP_GAIN_MAX = 0.5

#: A resistor's power rating must be at least this multiple of its dissipation
#: (model s.7 for Re, s.3 for the bias resistor; common practice).
RESISTOR_POWER_MARGIN = 2.0

#: Gain-bandwidth margin: GBW >= 10 * G * f_high (model s.8; common practice).
GBW_MARGIN = 10.0

#: Largest output DC offset for a DC-coupled loudspeaker [V] (model s.8; common practice).
OFFSET_MAX_V = 0.050

#: Output capacitor voltage rating >= 1.25 * supply (model s.9; common practice).
CAP_VOLTAGE_MARGIN = 1.25

#: Input corner at most f_low / 4 (model s.9; common practice).
INPUT_CORNER_FACTOR = 4.0

#: Default input resistance [ohm] (model s.9).
INPUT_RESISTANCE_OHM = 22_000.0

#: Gain-setting resistor Rg range [ohm] (model s.9; common practice impedance level).
RG_MIN_OHM = 1_000.0
RG_MAX_OHM = 10_000.0

#: Gain error above which a warning is given (model s.13).
GAIN_ERROR_WARN = 0.02

#: Emitter resistor range [ohm] (model s.9).
RE_MIN_OHM = 0.1
RE_MAX_OHM = 1.0

#: Zobel network (model s.9; common practice).
ZOBEL_R_OHM = 10.0
ZOBEL_C_F = 100e-9

#: Decoupling per channel and rail (model s.13; common practice).
DECOUPLING_CERAMIC_F = 100e-9
DECOUPLING_ELECTROLYTIC_F = 100e-6

#: Mid-rail divider for the single-supply arrangement (model s.13).
MIDRAIL_R_MIN_OHM = 10_000.0
MIDRAIL_R_MAX_OHM = 100_000.0
MIDRAIL_C_MIN_F = 10e-6

#: Mid-rail divider resistor target [ohm]: two equal 47 kohm resistors, inside
#: MIDRAIL_R_MIN_OHM..MIDRAIL_R_MAX_OHM (common practice: high enough to draw
#: little current, low enough that input bias current shifts mid-rail little).
MIDRAIL_R_TARGET_OHM = 47_000.0

#: Current-source bias feed compliance [V] (model s.3; common practice: the
#: reference minus Vbe plus a saturation margin, about 1 V).
CCS_COMPLIANCE_V = 1.0

#: Current through the two-diode or LED reference of the current-source bias
#: feed [A] (model s.3; common practice: a few mA keeps the reference on the
#: steep part of its forward curve while the resistor feeding it stays small-signal).
CCS_REFERENCE_CURRENT_A = 0.002

#: Regulator set-point grid step [V] (model s.10).
REGULATOR_STEP_V = 0.1

#: Adjustable regulator set resistor R1 (reference to output) range [ohm]
#: (common practice: Vref / R1 of a few mA keeps the regulator above its
#: minimum load current with no load connected).
REGULATOR_R1_MIN_OHM = 100.0
REGULATOR_R1_MAX_OHM = 1_000.0

#: Case-to-sink thermal resistance with an insulating washer and thermal grease,
#: by package [K/W] (model s.13; from memory). Used when the heatsink gives none.
RTH_CS_INSULATED_K_W = {
    "TO-126": 1.0,
    "TO-220": 0.8,
    "TO-247": 0.4,
    "TO-3P": 0.4,
    "TO-264": 0.4,
}

#: Rth_cs for a package not in the table [K/W] (model s.13).
RTH_CS_UNKNOWN_K_W = 1.0

#: Junction-to-ambient thermal resistance of small packages in free air, used
#: for the current-source transistor when the catalogue gives none [K/W]
#: (from memory: typical datasheet values for these packages; common practice).
RTH_JA_FREE_AIR_K_W = {
    "TO-92": 200.0,
    "SOT-23": 350.0,
    "TO-126": 100.0,
    "TO-220": 62.0,
}

#: Zero of the Celsius scale [K].
ZERO_C_K = 273.15
