"""The solar-viewing cautions printed on sheets, calendars and reports (one place for the wording).

Sources: ISO 12312-2:2015 (filters for direct observation of the Sun; it does
not cover filters for optics); the usual student-observing cautions collected
in reference-values section 7 (solar retinopathy is painless and can be
permanent; never through optics without a full-aperture filter; a lunar
eclipse is safe to the naked eye).
"""

SOLAR_CAUTION = (
    "Never look at the Sun directly or through optics without a certified solar filter "
    "(ISO 12312-2 for direct viewing); measure the shadow, not the Sun. Follow your host "
    "institution's safety rules."
)

SOLAR_CAUTION_FULL = (
    "Never look at the Sun directly, or through binoculars, a telescope, a finder or a camera "
    "viewfinder, without a certified solar filter: eclipse viewers must meet ISO 12312-2, and "
    "filters for optics must be full-aperture and front-mounted. Ordinary sunglasses, smoked "
    "glass and exposed film are not safe; eye injury from the Sun is painless and can be "
    "permanent. The shadow method needs no view of the Sun at all: measure the shadow, not the "
    "Sun. Never leave an instrument pointing at the Sun unattended. Follow local rules and your "
    "host institution's safety officer."
)

ECLIPSE_NOTE = (
    "A lunar eclipse is safe to watch with the naked eye, binoculars or a telescope. Keep any "
    "instrument away from the Sun before sunset and after sunrise, and follow your host "
    "institution's safety rules for night work."
)

PHASES_CAUTION = (
    "The Sun is up while you measure the half moon: never sight the Sun with the instrument or "
    "look at it directly; point only at the Moon, keep well away from the Sun, and follow your "
    "host institution's safety rules. " + "Filters for direct viewing must meet ISO 12312-2."
)

TRANSIT_CAUTION = (
    "A transit is timed on the Sun itself: project the Sun's image onto a white screen, or "
    "observe only through a certified full-aperture solar filter mounted in front of the "
    "telescope (ISO 12312-2 for direct viewing); never look through an unfiltered telescope, "
    "finder or camera, never leave an instrument pointing at the Sun unattended, and keep "
    "people away from the projected beam's focus. Follow your host institution's safety rules."
)

TRANSIT_CAUTION_MORE = (
    "Ordinary sunglasses, smoked glass and exposed film are not safe; eye injury from the Sun is "
    "painless and can be permanent. Cap the finder, let only trained people align the instrument, "
    "and keep children with an adult at the screen. Follow local rules and your host institution's "
    "safety officer."
)

STARS_NOTE = (
    "Star work is done in the dark, far from the Sun: cap every telescope and finder before "
    "sunrise and never slew towards the Sun in twilight. Use red light, mind cables and steps, "
    "never work alone at night, and follow your host institution's safety rules for night work."
)
