"""Write the corpus of bad and awkward inputs in this folder (one file per case).

Every case is invented. The valid campaign (``campaign.toml``) has three
sites: ``ridge`` (Europe/Zurich, 1 m gnomon), ``coast`` (Europe/Rome, 1 m
gnomon) and ``plain`` (no time zone, 1 m gnomon). ``shadows_good.csv`` holds
noise-free readings of the three sites around noon on 2027-03-20, made with
``firstrung.methods.shadows.rehearsal``; the other shadow logs reuse some of these readings
so that a file accepted with a note agrees with it.

The expected message of each case is in ``tests/test_bad_inputs.py``.
Run from the repository root: ``python tests/data/bad/make_corpus.py``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from firstrung.methods.shadows.rehearsal import ShadowErrors, simulate_shadow_readings

HERE = Path(__file__).resolve().parent

CAMPAIGN = """\
# The valid campaign the corpus logs refer to (invented sites).
[campaign]
name = "Invented corpus campaign"

[[site]]
id = "ridge"
name = "Ridge outreach dome"
latitude_deg = 46.2
longitude_deg = 7.4
elevation_m = 620
timezone = "Europe/Zurich"

[site.gnomon]
height_m = 1.0
height_sigma_m = 0.001
shadow_sigma_m = 0.002
edge = "umbra"

[[site]]
id = "coast"
name = "Coast school field kit"
latitude_deg = 40.8
longitude_deg = 8.5
elevation_m = 10
timezone = "Europe/Rome"

[site.gnomon]
height_m = 1.0
edge = "umbra"

[[site]]
id = "plain"
latitude_deg = 43.0
longitude_deg = 8.0

[site.gnomon]
height_m = 1.0

[logs]
shadows = ["shadows_good.csv"]
"""

SITES = {"ridge": (46.2, 7.4, 620.0), "coast": (40.8, 8.5, 10.0), "plain": (43.0, 8.0, 0.0)}
GOOD_TIMES = {
    "ridge": [f"2027-03-20T11:{m:02d}:00" for m in range(20, 60, 5)],
    "coast": [f"2027-03-20T11:{m:02d}:00" for m in range(15, 55, 5)],
    "plain": [f"2027-03-20T11:{m:02d}:00" for m in range(15, 55, 5)],
}


def noise_free_mm(site: str, time_utc: str) -> float:
    """The shadow of the site's 1 m gnomon (umbra edge) at that UTC time [mm]."""
    lat, lon, elev = SITES[site]
    syn = simulate_shadow_readings(
        np.array([0]),
        np.array([time_utc], dtype="datetime64[s]"),
        np.array([lat]),
        np.array([lon]),
        np.array([elev]),
        np.array([1.0]),
        np.array(["umbra"], dtype=object),
        ShadowErrors(),
        np.random.default_rng(0),
    )
    return float(syn.shadow_m[0]) * 1000.0


def mm(site: str, time_utc: str) -> str:
    return f"{noise_free_mm(site, time_utc):.1f}"


def good_log() -> str:
    lines = ["site,time_utc,shadow_mm,observer"]
    for site, times in GOOD_TIMES.items():
        lines += [f"{site},{t}Z,{mm(site, t)},invented team {site}" for t in times]
    return "\n".join(lines) + "\n"


def lines(*rows: str, end: str = "\n") -> str:
    return end.join(rows) + end


def cases() -> dict[str, bytes]:
    r1, r2, c1 = "2027-03-20T11:30:00", "2027-03-20T11:35:00", "2027-03-20T11:30:00"
    ridge1, ridge2, coast1 = mm("ridge", r1), mm("ridge", r2), mm("coast", c1)
    comma = {k: v.replace(".", ",") for k, v in {"r1": ridge1, "r2": ridge2, "c1": coast1}.items()}
    ridge1_m = f"{noise_free_mm('ridge', r1) / 1000:.4f}"
    files: dict[str, str | bytes] = {
        "campaign.toml": CAMPAIGN,
        "shadows_good.csv": good_log(),
        # --- spreadsheet exports -------------------------------------------------------
        "shadows_semicolon_decimal_comma.csv": lines(
            "site;time_utc;shadow_mm;temperature_c;observer",
            f"ridge;{r1}Z;{comma['r1']};-2,5;T. Okafor",
            f"coast;{c1}Z;{comma['c1']};4;M. Brandt",
            end="\r\n",
        ),
        "shadows_semicolon_decimal_point.csv": lines(
            "site;time_utc;shadow_mm", f"ridge;{r1}Z;{ridge1}", f"coast;{c1}Z;{coast1}"
        ),
        "shadows_semicolon_ambiguous_thousands.csv": lines(
            "site;time_utc;shadow_m",
            f"ridge;{r1}Z;{ridge1_m.replace('.', ',')}",
            f"ridge;{r2}Z;1.038",
            end="\r\n",
        ),
        "shadows_thousands_separator.csv": lines(
            "site;time_utc;shadow_mm", f"ridge;{r1}Z;{comma['r1']}", f"ridge;{r2}Z;1.038,5"
        ),
        "shadows_comma_split_by_decimal_comma.csv": lines(
            "site,time_utc,shadow_mm,observer",
            f"ridge,{r1}Z,{ridge1},T. Okafor",
            f"ridge,{r2}Z,{comma['r2']},T. Okafor",
        ),
        "shadows_comma_quoted_decimal_comma.csv": lines(
            "site,time_utc,shadow_mm", f'ridge,{r1}Z,"{comma["r1"]}"', f"coast,{c1}Z,{coast1}"
        ),
        "shadows_tab_decimal_comma.csv": lines(
            "site\ttime_utc\tshadow_mm",
            f"ridge\t{r1}Z\t{comma['r1']}",
            f"coast\t{c1}Z\t{comma['c1']}",
        ),
        "shadows_semicolon_time_comma_fraction.csv": lines(
            "site;time_utc;shadow_mm", f"ridge;{r1},5Z;{comma['r1']}"
        ),
        "shadows_trailing_separators.csv": lines(
            "site;time_utc;shadow_mm;;;", f"ridge;{r1}Z;{comma['r1']};;;", ";;;;;"
        ),
        # --- encodings and line ends -------------------------------------------------
        "shadows_utf8_bom.csv": b"\xef\xbb\xbf"
        + lines("site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}").encode(),
        "shadows_utf16_unicode_text.csv": "\ufeff".encode("utf-16-le")
        + lines(
            "site\ttime_utc\tshadow_mm\tobserver",
            f"ridge\t{r1}Z\t{comma['r1']}\tZo\u00eb M\u00fcller",
            end="\r\n",
        ).encode("utf-16-le"),
        "shadows_utf16_big_endian.csv": "\ufeff".encode("utf-16-be")
        + lines("site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}").encode("utf-16-be"),
        "shadows_utf16_without_bom.csv": lines(
            "site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}"
        ).encode("utf-16-le"),
        "shadows_utf16_broken.csv": b"\xff\xfe"
        + "site,time_utc,shadow_mm\n".encode("utf-16-le")
        + b"\x00\xd8,\x00",  # a lone high surrogate
        "shadows_utf32.csv": lines("site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}").encode(
            "utf-32"
        ),
        "shadows_windows_1252.csv": lines(
            "site,time_utc,shadow_mm,observer", f"ridge,{r1}Z,{ridge1},Ren\u00e9e L\u00f8kke"
        ).encode("cp1252"),
        "shadows_bom_then_not_utf8.csv": b"\xef\xbb\xbf"
        + lines("site,time_utc,shadow_mm,observer", f"ridge,{r1}Z,{ridge1},Ren\u00e9e").encode(
            "cp1252"
        ),
        "shadows_workbook.xlsx": b"PK\x03\x04\x14\x00\x06\x00\x08\x00\x00\x00!\x00"
        + b"[Content_Types].xml invented stand-in for a workbook",
        "shadows_crlf.csv": lines(
            "site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}", f"coast,{c1}Z,{coast1}", end="\r\n"
        ),
        "shadows_cr_only.csv": lines(
            "site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}", f"coast,{c1}Z,{coast1}", end="\r"
        ),
        "shadows_nul_byte.csv": lines(
            "site,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}", f"ridge,{r2}Z,10\x0038"
        ),
        # --- layout ----------------------------------------------------------------------
        "shadows_blank_and_comment_lines.csv": lines(
            "# shadow log of the invented ridge team",
            "",
            "site,time_utc,shadow_mm",
            "# first reading after levelling",
            f"ridge,{r1}Z,{ridge1}",
            ",,",
            "   ",
            f"ridge,{r2}Z,abc",
            f"coast,{c1}Z,{coast1}",
        ),
        "shadows_header_case_and_spaces.csv": lines(
            " Site , Time UTC ,SHADOW_MM ,Observer", f"ridge,{r1}Z,{ridge1},T. Okafor"
        ),
        "shadows_duplicated_column.csv": lines(
            "site,time_utc,shadow_mm,shadow_mm", f"ridge,{r1}Z,{ridge1},{ridge1}"
        ),
        "shadows_two_length_units.csv": lines(
            "site,time_utc,shadow_cm,shadow_mm", f"ridge,{r1}Z,103.9,{ridge1}"
        ),
        "shadows_both_time_columns.csv": lines(
            "site,time_utc,time_local,shadow_mm", f"ridge,{r1}Z,,{ridge1}"
        ),
        "shadows_missing_site_column.csv": lines(
            "station,time_utc,shadow_mm", f"ridge,{r1}Z,{ridge1}"
        ),
        "shadows_missing_length_column.csv": lines("site,time_utc,shadow_in", f"ridge,{r1}Z,40.9"),
        "shadows_empty.csv": b"",
        "shadows_only_comments.csv": lines("# nothing was read: cloudy all day", ""),
        "shadows_surplus_cells.csv": lines(
            "site,time_utc,shadow_mm,note", f"ridge,{r1}Z,{ridge1},cloudy, then clear"
        ),
        "shadows_unterminated_quote.csv": lines(
            "site,time_utc,shadow_mm,note",
            f"ridge,{r1}Z,{ridge1},ok",
            f'ridge,{r2}Z,{ridge2},"left open',
            f"coast,{c1}Z,{coast1},",
        ),
        "shadows_multiline_note.csv": lines(
            "site,time_utc,shadow_mm,note",
            f'ridge,{r1}Z,{ridge1},"board re-levelled\nthen read"',
            f"coast,{c1}Z,{coast1},",
        ),
        # --- values ---------------------------------------------------------------------
        "shadows_nan_inf.csv": lines(
            "site,time_utc,shadow_mm,temperature_c",
            f"ridge,{r1}Z,nan,",
            f"ridge,{r2}Z,inf,",
            f"coast,{c1}Z,-inf,",
            f"coast,{c1}Z,{coast1},NaN",
            f"ridge,{r1}Z,{ridge1},",
        ),
        "shadows_absurd_magnitudes.csv": lines(
            "site,time_utc,shadow_mm,gnomon_m,temperature_c,pressure_hpa",
            f"ridge,{r1}Z,1e300,,,",
            f"ridge,{r1}Z,1e400,,,",
            f"ridge,{r1}Z,0,,,",
            f"ridge,{r1}Z,-{ridge1},,,",
            f"ridge,{r1}Z,{ridge1},150,,",
            f"ridge,{r1}Z,{ridge1},,200,",
            f"ridge,{r1}Z,{ridge1},,,5",
            f"ridge,{r1}Z,{'9' * 400},,,",
        ),
        "shadows_dst_gap.csv": lines("site,time_local,shadow_mm", "ridge,2027-03-28T02:30:00,1000"),
        "shadows_dst_overlap.csv": lines(
            "site,time_local,shadow_mm", "coast,2027-10-31T02:30:00,1000"
        ),
        "shadows_outside_ephemeris.csv": lines(
            "site,time_utc,shadow_mm",
            "ridge,1850-03-20T11:30:00Z,1039",
            "ridge,2060-03-20T11:30:00Z,1039",
        ),
        "shadows_unknown_site.csv": lines(
            "site,time_utc,shadow_mm", f"hill,{r1}Z,{ridge1}", f"ridge,{r1}Z,{ridge1}"
        ),
        "shadows_local_time_without_zone.csv": lines(
            "site,time_local,shadow_mm", "plain,2027-03-20T12:30:00,1000"
        ),
        "shadows_bad_times.csv": lines(
            "site,time_utc,shadow_mm",
            f"ridge,20/03/2027 11:30,{ridge1}",
            f"ridge,2027-03-20T12:30:00+01:00,{ridge1}",
            f"ridge,2027-02-30T11:30:00Z,{ridge1}",
            f"ridge,,{ridge1}",
        ),
        # --- eclipse logs ----------------------------------------------------------------
        "eclipse_bad_rows.csv": lines(
            "site,time_utc,event,feature,time_sigma_s",
            "coast,2029-06-26T01:32:40Z,U5,,",
            "coast,2029-06-26T01:32:40Z,,,",
            "coast,2029-06-26T01:41:05Z,immersion,,",
            "coast,2029-06-26T01:41:05Z,U3,Tycho,",
            "coast,2029-06-26T01:32:40Z,U1,,0",
            "coast,2029-06-26T01:32:40Z,U1,,1e9",
            "coast,2029-06-26T01:32:40Z,U1,,nan",
            "harbour,2029-06-26T01:32:40Z,U1,,",
            "coast,2029-06-26T01:32:40Z,u1,,5",
        ),
        "eclipse_semicolon_decimal_comma.csv": lines(
            "site;time_local;event;feature;time_sigma_s",
            "coast;2029-06-26T03:32:40;U1;;2,5",
            "coast;2029-06-26T03:41:05;immersion;Kepler;1,5",
            end="\r\n",
        ),
        "eclipse_missing_event_column.csv": lines(
            "site,time_utc,contact", "coast,2029-06-26T01:32:40Z,U1"
        ),
        # --- half-moon logs --------------------------------------------------------------
        "phases_bad_rows.csv": lines(
            "site,time_utc,quarter,elongation_deg,illuminated_fraction,time_sigma_s",
            "ridge,2027-01-15T18:40:00Z,full,,,",
            "ridge,2027-01-15T18:40:00Z,first,180,,",
            "ridge,2027-01-15T18:40:00Z,first,,1.2,",
            "ridge,2027-01-15T18:40:00Z,first,89.6,0.5,",
            "ridge,2027-01-15T18:40:00Z,first,NaN,,",
            "ridge,2027-01-15T18:40:00Z,first,,,7200",
            "ridge,2027-01-15T18:40:00Z,first,89.6,,",
        ),
        "phases_tab_decimal_comma.csv": lines(
            "site\ttime_utc\tquarter\telongation_deg", "ridge\t2027-01-15T18:40:00Z\tfirst\t89,6"
        ),
        "phases_both_time_columns.csv": lines(
            "site,time_utc,time_local,quarter", "ridge,2027-01-15T18:40:00Z,,first"
        ),
    }
    site = '[[site]]\nid = "ridge"\nlatitude_deg = 46.2\nlongitude_deg = 7.4\n'
    logs = '[logs]\nshadows = ["shadows_good.csv"]\n'
    files.update(
        {
            "campaign_toml_syntax_error.toml": site + "elevation_m = = 620\n",
            "campaign_unterminated_string.toml": '[campaign]\nname = "Invented\n' + site,
            "campaign_duplicate_site_ids.toml": site + site.replace("46.2", "40.8"),
            "campaign_unknown_zone.toml": site + 'timezone = "Europe/Zurch"\n',
            "campaign_zone_folder.toml": site + 'timezone = "Europe"\n',
            "campaign_nan_latitude.toml": site.replace("46.2", "nan"),
            "campaign_missing_longitude.toml": site.replace("longitude_deg = 7.4\n", ""),
            "campaign_huge_integer.toml": site.replace("46.2", "1" + "0" * 400),
            "campaign_too_many_digits.toml": site.replace("46.2", "1" + "0" * 5000),
            "campaign_deep_nesting.toml": site + "elevation_m = " + "[" * 5000 + "]" * 5000 + "\n",
            "campaign_baseline_unknown_site.toml": site
            + '[[baseline]]\nsites = ["ridge", "harbour"]\ndistance_km = 598\nsigma_km = 2\n',
            "campaign_baseline_absurd.toml": site
            + site.replace('"ridge"', '"coast"').replace("46.2", "40.8")
            + '[[baseline]]\nsites = ["ridge", "coast"]\ndistance_km = 6e9\nsigma_km = 2\n',
            "campaign_empty.toml": "",
            "campaign_utf16.toml": (site + logs).encode("utf-16"),
            "campaign_not_utf8.toml": (site + 'name = "Ren\u00e9e\'s dome"\n').encode("cp1252"),
            "campaign_bom_crlf.toml": b"\xef\xbb\xbf"
            + CAMPAIGN.replace("\n", "\r\n").encode("utf-8"),
            "campaign_workbook.toml": b"PK\x03\x04\x14\x00\x06\x00 invented stand-in",
        }
    )
    files.update(form_cases())
    return {
        name: data.encode("utf-8") if isinstance(data, str) else data
        for name, data in files.items()
    }


def form_cases() -> dict[str, str]:
    """The other ways of recording the noon Sun, each with its bad rows beside a good length row."""
    r1, r2 = "2027-03-20T11:20:00", "2027-03-20T11:25:00"
    return {
        "shadows_form_angle_out_of_range.csv": lines(
            "site,time_utc,shadow_mm,Altitude [deg],limb",
            f"ridge,{r1}Z,{mm('ridge', r1)},,",
            "ridge,2027-03-20T11:40:00Z,,97.5,lower",
            "ridge,2027-03-20T11:45:00Z,,-3,lower",
            f"ridge,{r2}Z,{mm('ridge', r2)},43.6,",
            "ridge,2027-03-20T11:50:00Z,,43.6,left",
        ),
        "shadows_form_short_trace.csv": lines(
            "site,date,time_utc,shadow_mm,tip_x_mm,tip_y_mm",
            f"ridge,2027-03-20,11:20,{mm('ridge', r1)},,",
            "Coast school field kit,2027-03-20,,,-250,861",
            "coast,2027-03-20,,,-10,859",
            "coast,2027-03-20,,,240,862",
        ),
        "shadows_form_ambiguous_date.csv": lines(
            "Site,Date,Time (local),Shadow (mm)",
            f"Ridge outreach dome,20/03/2027,12:20,{mm('ridge', r1)}",
            f"ridge,03/04/2027,12:20,{mm('ridge', r1)}",
            f"ridge,20/03/2027,12:25 PM,{mm('ridge', r2)}",
        ),
    }


def main() -> None:
    for name, data in cases().items():
        (HERE / name).write_bytes(data)
    print(f"wrote {len(cases())} files to {HERE.name}/")


if __name__ == "__main__":
    main()
