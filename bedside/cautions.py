"""The usual cautions, shown in --help, the README and the UI (one wording, one place).

Sources: ASET skin-safety position statement (skin preparation, neonates); collodion
safety data (ether-based, flammable); standard infection-control precautions.
"""

CAUTIONS = """\
Cautions (follow your local policy and licensed practice; bedside does not diagnose
and is not a medical device):
  - Skin preparation: light strokes, do not over-prepare or abrade; check the skin
    regularly; never apply over broken skin; document any moved site.
  - Neonates (<= 44 weeks GA) have fragile skin: gentlest preparation, check often.
  - Collodion is ether-based: flammable; use ventilation or local exhaust, keep it
    away from ignition sources.
  - Infection control: standard precautions; reprocess electrodes as the
    manufacturer says; single-use electrodes where indicated.
  - Equipment grounded to a common point, as your department requires."""

DISCLAIMER = "bedside supports the technologist; it does not diagnose and is not a medical device."

#: Said before every tap test (the command and the app's screen).
TAP_CAUTION = (
    "Touch each electrode lightly (a gloved fingertip or the wooden end of a swab) when it is "
    "named; never press on fragile skin (neonates), a fontanelle, a wound or a pressure area; "
    "standard infection-control precautions; follow your local policy."
)
