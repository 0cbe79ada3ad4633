"""Physical and conventional constants, each with its unit and its source."""

from __future__ import annotations

# --- Earth figure -----------------------------------------------------------
#: WGS84 semi-major axis [m]. NIMA TR8350.2 (2000); EPSG:7030.
WGS84_SEMI_MAJOR_AXIS_M = 6_378_137.0
#: WGS84 flattening [1]. NIMA TR8350.2 (2000): 1/f = 298.257 223 563.
WGS84_FLATTENING = 1.0 / 298.257223563
#: WGS84 semi-minor axis [m], b = a (1 - f). NIMA TR8350.2 gives 6 356 752.3142 m.
WGS84_SEMI_MINOR_AXIS_M = WGS84_SEMI_MAJOR_AXIS_M * (1.0 - WGS84_FLATTENING)
#: IUGG mean radius R1 = (2a + b) / 3 [km]. Moritz (2000), J. Geodesy 74:128.
IUGG_MEAN_RADIUS_KM = (2.0 * WGS84_SEMI_MAJOR_AXIS_M + WGS84_SEMI_MINOR_AXIS_M) / 3.0 / 1000.0

# --- Sun ----------------------------------------------------------------------
#: Solar semi-diameter at 1 au [arcsec]: Auwers' 959.63", the value the
#: Astronomical Almanac uses (Meeus 1998, ch. 55).
SUN_SEMIDIAMETER_AT_1AU_ARCSEC = 959.63
#: Astronomical unit [km]. IAU 2012 Resolution B2 (exact).
ASTRONOMICAL_UNIT_KM = 149_597_870.700

# --- Earth rotation -------------------------------------------------------------
#: Mean rate of the Sun's hour angle [deg per hour]: 360 deg per mean solar day.
SUN_HOUR_ANGLE_RATE_DEG_PER_H = 15.0
#: Earth's rotation rate [rad per s]. IERS Conventions (2010), Table 1.1 (nominal).
EARTH_ROTATION_RATE_RAD_PER_S = 7.292115e-5
#: Speed of light [km per s]. SI definition (exact).
SPEED_OF_LIGHT_KM_PER_S = 299_792.458

# --- Standard atmosphere for refraction -------------------------------------------
#: Standard temperature of Bennett's refraction formula [deg C] (Meeus 1998, ch. 16).
STANDARD_TEMPERATURE_C = 10.0
#: Standard pressure of Bennett's refraction formula [hPa] (Meeus 1998, ch. 16).
STANDARD_PRESSURE_HPA = 1010.0
#: Scale height used to reduce the standard pressure to a site's elevation [m].
#: Isothermal atmosphere at 10 deg C: R T / (M g) = 287.05 * 283.15 / 9.80665 (common practice).
PRESSURE_SCALE_HEIGHT_M = 8288.0

# --- The bundled ephemeris --------------------------------------------------------
#: File name of the JPL ephemeris shipped by the skyfield-data package.
EPHEMERIS_FILE = "de421.bsp"
#: First and last instants (UTC, ISO 8601) that DE421 covers (JD TDB 2414864.5 to 2471184.5),
#: read from the file's SPK segment bounds; times outside are refused.
EPHEMERIS_FIRST_UTC = "1899-07-29T00:00:00"
EPHEMERIS_LAST_UTC = "2053-10-08T00:00:00"

# --- Moon -------------------------------------------------------------------------
#: Lunar mean radius [km]: the IAU/WGCCRE cartographic reference sphere
#: (Seidelmann et al. 2002; the datum of USGS lunar maps).
MOON_MEAN_RADIUS_KM = 1737.4

# --- Lunar eclipses: the Earth's shadow ---------------------------------------------
#: Earth's radius in the shadow conventions' parallaxes [km]: pi = asin(a / d) with the
#: WGS84 equatorial radius (reference-values 4.3; the conventions are stated for the
#: equatorial horizontal parallax).
SHADOW_EARTH_RADIUS_KM = 6378.137
#: Danjon (1951): the Earth's radius enlarged by 1/85, less 1/594 for the oblateness,
#: i.e. 1.01 times the Moon's parallax in both shadow radii. Used by the NASA Five
#: Millennium Canon (Espenak & Meeus 2009, NASA/TP-2009-214172; "Enlargement of Earth's
#: Shadows", eclipse.gsfc.nasa.gov/LEcat5/shadow.html).
DANJON_PARALLAX_FACTOR = 1.01
#: Chauvenet (1891): both shadow radii enlarged by 1/50 (same NASA page).
CHAUVENET_ENLARGEMENT_FACTOR = 1.02
#: Chauvenet's factor on the Moon's parallax: the Earth's radius at 45 deg latitude,
#: 1 - (1/2)(1/300) (same NASA page).
CHAUVENET_PARALLAX_FACTOR = 0.998340
#: The Sun's mean rate along the ecliptic, i.e. the Earth's shadow's motion against the
#: stars [deg per h]: 360 deg per tropical year of 365.2422 d (common practice).
SUN_MEAN_RATE_DEG_PER_H = 360.0 / 365.2422 / 24.0
