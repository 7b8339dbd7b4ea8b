#!/usr/bin/env python3
"""Write the bad-input corpus (tests/bad-inputs/KIND/NAME) and its manifest.

Each case is a small file derived from a valid one by a single change. Run from the repository root:

    python3 scripts/bad_inputs.py
    DRYFRONT_BLESS=1 cargo test --release --test bad_inputs   # fills in the expected messages

Existing expected messages in tests/bad-inputs/manifest.tsv are kept; new cases get an empty message until blessed.
All values are invented.
"""
import json
import os

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..")
CORPUS = os.path.join(ROOT, "tests", "bad-inputs")
MANIFEST = os.path.join(CORPUS, "manifest.tsv")

WEATHER = "weather summary {file}"
ARRIVALS = ("season run --scenario models/buying-points/wrenfield.json --drier rate-rule "
            "--arrivals {file} --out {out}")
CROP = "props emc --crop {file} --temp 25 --rh 60"
CONTAINER = "airflow --container {file} --flow-m3-min 100 --nx 8 --ny 4 --nz 6"
FAN = "airflow --container trailer-6m --fan {file} --nx 8 --ny 4 --nz 6"
SCENARIO = "dry --scenario {file}"
BUYING_POINT = "season run --scenario {file} --generate --loads 5 --drier rate-rule --out {out}"
STATUS = "status {file} --members 0"
STATS = "weather synth --stats {file} --start 2026-09-01 --days 3 --out {out}"

cases = []  # (relative file, bytes, command)


def add(kind, name, data, command):
    if isinstance(data, str):
        data = data.encode()
    cases.append((f"{kind}/{name}", data, command))


# ---------------------------------------------------------------- weather CSV (our schema)
CSV_HEAD = "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,pressure_kpa,rain_mm,wind_m_s\n"


def csv_rows(n=6, edit=None):
    rows = []
    for h in range(n):
        r = [f"2026-09-01T{h:02}:00", f"{20 + 0.5 * h:.1f}", f"{60 + h}", "101.2", "0.0", "2.0"]
        if edit:
            edit(h, r)
        if r is not None:
            rows.append(",".join(r))
    return "".join(x + "\n" for x in rows)


def csv_cell(hour, col, value, n=6):
    def e(h, r):
        if h == hour:
            r[col] = value
    return CSV_HEAD + csv_rows(n, e)


def wcsv(name, text):
    add("weather-csv", name, text, WEATHER)


wcsv("empty.csv", "")
wcsv("only_comments.csv", "# utc_offset=-05:00\n# site=Nowhere\n")
wcsv("header_only.csv", CSV_HEAD)
wcsv("semicolon_header.csv", CSV_HEAD.replace(",", ";") + csv_rows().replace(",", ";"))
wcsv("semicolon_rows.csv", CSV_HEAD + csv_rows().replace(",", ";"))
wcsv("semicolon_decimal_comma.csv", CSV_HEAD.replace(",", ";") + csv_rows().replace(",", ";").replace(".", ","))
wcsv("tab_separated.csv", CSV_HEAD.replace(",", "\t") + csv_rows().replace(",", "\t"))
wcsv("short_row.csv", CSV_HEAD + csv_rows(3) + "2026-09-01T03:00,21.5,63\n")
wcsv("extra_field.csv", CSV_HEAD + csv_rows(3) + "2026-09-01T03:00,21.5,63,101.2,0.0,2.0,7\n")
wcsv("text_in_temp.csv", csv_cell(2, 1, "warm"))
wcsv("text_in_rh.csv", csv_cell(2, 2, "humid"))
wcsv("rh_140.csv", csv_cell(2, 2, "140"))
wcsv("rh_negative.csv", csv_cell(4, 2, "-3"))
wcsv("temp_75.csv", csv_cell(1, 1, "75"))
wcsv("temp_minus_60.csv", csv_cell(1, 1, "-60"))
wcsv("temp_nan.csv", csv_cell(3, 1, "NaN"))
wcsv("temp_inf.csv", csv_cell(3, 1, "inf"))
wcsv("temp_comma_decimal.csv", csv_cell(3, 1, '"21,5"'))
wcsv("pressure_30kpa.csv", csv_cell(2, 3, "30"))
wcsv("pressure_in_pa.csv", csv_cell(0, 3, "101325"))
wcsv("rain_negative.csv", csv_cell(2, 4, "-1"))
wcsv("rain_900.csv", csv_cell(2, 4, "900"))
wcsv("wind_100.csv", csv_cell(2, 5, "100"))
wcsv("wind_negative.csv", csv_cell(2, 5, "-2"))
wcsv("filled_2.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,filled\n2026-09-01T00:00,20,60,0\n2026-09-01T01:00,20,60,2\n")
wcsv("dew_above.csv", "# utc_offset=-05:00\ntimestamp,temp_c,dew_point_c\n2026-09-01T00:00,20.0,15.0\n2026-09-01T01:00,20.0,21.0\n")
wcsv("dew_f_above.csv", "# utc_offset=-05:00\ntimestamp,temp_f,dew_point_f\n2026-09-01T00:00,68.0,60.0\n2026-09-01T01:00,68.0,70.0\n")
wcsv("celsius_under_temp_f.csv", "# utc_offset=-05:00\ntimestamp,temp_f,rh_pct\n" + "".join(
    f"2026-09-01T{h:02}:00,{16 + h % 8},{70 - h}\n" for h in range(24)))
wcsv("fahrenheit_under_temp_c.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct\n" + "".join(
    f"2026-09-01T{h:02}:00,{50 + h % 8},{70 - h}\n" for h in range(24)))
wcsv("temp_f_200.csv", "# utc_offset=-05:00\ntimestamp,temp_f,rh_pct\n2026-09-01T00:00,200,50\n")
wcsv("both_temp.csv", "# utc_offset=-05:00\ntimestamp,temp_c,temp_f,rh_pct\n2026-09-01T00:00,20,68,50\n")
wcsv("both_dew.csv", "# utc_offset=-05:00\ntimestamp,temp_c,dew_point_c,dew_point_f\n2026-09-01T00:00,20,10,50\n")
wcsv("no_temp.csv", "# utc_offset=-05:00\ntimestamp,rh_pct\n2026-09-01T00:00,50\n")
wcsv("no_humidity.csv", "# utc_offset=-05:00\ntimestamp,temp_c\n2026-09-01T00:00,20\n")
wcsv("no_timestamp.csv", "temp_c,rh_pct\n20,50\n")
wcsv("unknown_column.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,solar_w_m2\n2026-09-01T00:00,20,50,300\n")
wcsv("misspelt_column.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_percent\n2026-09-01T00:00,20,50\n")
wcsv("duplicate_column.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,rh_pct\n2026-09-01T00:00,20,50,50\n")
wcsv("empty_header_cell.csv", "# utc_offset=-05:00\ntimestamp,temp_c,,rh_pct\n2026-09-01T00:00,20,,50\n")
wcsv("no_offset.csv", "timestamp,temp_c,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("bad_offset_setting.csv", "# utc_offset=EST\ntimestamp,temp_c,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("offset_out_of_range.csv", "timestamp,temp_c,rh_pct\n2026-09-01T00:00+15:00,20,50\n")
wcsv("bad_elevation.csv", "# utc_offset=-05:00\n# elevation_m=9000\ntimestamp,temp_c,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("elevation_text.csv", "# utc_offset=-05:00\n# elevation_m=high\ntimestamp,temp_c,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("bad_date.csv", csv_cell(3, 0, "2026-09-31T03:00"))
wcsv("leap_day_2025.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct\n2025-02-29T00:00,20,50\n")
wcsv("timestamp_words.csv", csv_cell(1, 0, "yesterday"))
wcsv("timestamp_fraction.csv", csv_cell(1, 0, "2026-09-01T01:00:00.5"))
wcsv("timestamp_us_format.csv", csv_cell(1, 0, "09/01/2026 01:00"))
wcsv("duplicate_hour.csv", csv_cell(3, 0, "2026-09-01T02:00"))
wcsv("out_of_order.csv", csv_cell(3, 0, "2026-09-01T00:00"))
wcsv("off_grid.csv", csv_cell(3, 0, "2026-09-01T02:30"))
wcsv("gap_too_long.csv", CSV_HEAD + csv_rows(2) + "2026-09-01T07:00,21.5,63,101.2,0.0,2.0\n")
wcsv("value_gap_too_long.csv", CSV_HEAD + csv_rows(8, lambda h, r: r.__setitem__(2, "") if 1 <= h <= 5 else None))
wcsv("gap_at_start.csv", csv_cell(0, 1, ""))
wcsv("gap_at_end.csv", csv_cell(5, 2, ""))
wcsv("all_temps_missing.csv", CSV_HEAD + csv_rows(4, lambda h, r: r.__setitem__(1, "")))
wcsv("not_utf8.csv", (CSV_HEAD + csv_rows(2)).encode() + b"2026-09-01T02:00,2\xff,50,101.2,0.0,2.0\n")
wcsv("latin1_site.csv", b"# utc_offset=-05:00\n# site=Caf\xe9\ntimestamp,temp_c,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("unterminated_quote.csv", CSV_HEAD + csv_rows(2) + '"2026-09-01T02:00,21,62,101.2,0.0,2.0\n' + csv_rows(1))
wcsv("crlf_short_row.csv", (CSV_HEAD + csv_rows(3) + "2026-09-01T03:00,21.5\n").replace("\n", "\r\n"))
wcsv("nul_in_header.csv", "# utc_offset=-05:00\ntimestamp,temp_c\0,rh_pct\n2026-09-01T00:00,20,50\n")
wcsv("html_page.csv", "<!DOCTYPE html>\n<html><body>Not found</body></html>\n")
wcsv("json_file.csv", '{"timestamp": "2026-09-01T00:00", "temp_c": 20}\n')

# ---------------------------------------------------------------- EPW
EPW_HEADER = [
    "LOCATION,Tar Landing Corpus,NC,USA,invented,999999,35.00,-77.00,-5.0,12.0",
    "DESIGN CONDITIONS,0",
    "TYPICAL/EXTREME PERIODS,0",
    "GROUND TEMPERATURES,0",
    "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
    "COMMENTS 1,Invented corpus file",
    "COMMENTS 2,One day: 1 September 2026 (a Tuesday)",
    "DATA PERIODS,1,1,Data,Tuesday, 9/ 1, 9/ 1",
]


def epw_row(day=1, hour=1, t="20.0", dew="12.0", rh=None, p="101000", wind="2.0", rain="0", year="2026", month="9",
            minute="60"):
    rh = rh if rh is not None else str(60 + hour)
    f = [year, month, str(day), str(hour), minute, "?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9?9?9*9*9?9?9?9", t, dew, rh, p]
    f += ["9999"] * 6 + ["999999"] * 3 + ["9999", "180", wind, "5", "5", "9999", "99999", "9", "999999999", "999",
                                          "0.999", "999", "99", "999", rain, "1"]
    assert len(f) == 35
    return ",".join(f)


def epw(header=None, rows=None, row_edit=None):
    header = EPW_HEADER if header is None else header
    if rows is None:
        rows = []
        for h in range(1, 25):
            kw = {"hour": h}
            if row_edit:
                row_edit(h, kw)
            if kw is not None:
                rows.append(epw_row(**kw))
    return "".join(x + "\n" for x in header + rows)


def hdr(k, text):
    h = list(EPW_HEADER)
    if text is None:
        del h[k - 1]
    else:
        h[k - 1] = text
    return h


def at_hour(h0, **changes):
    def e(h, kw):
        if h == h0:
            kw.update(changes)
    return e


def wepw(name, text):
    add("epw", name, text, WEATHER)


wepw("empty.epw", "")
wepw("location_only.epw", EPW_HEADER[0] + "\n")
wepw("no_location.epw", epw(header=hdr(1, "PLACE,Tar Landing,NC,USA,invented,999999,35.00,-77.00,-5.0,12.0")))
wepw("semicolon.epw", epw().replace(",", ";"))
wepw("semicolon_data.epw", epw(rows=[epw_row(hour=1).replace(",", ";")]))
wepw("missing_design_conditions.epw", epw(header=hdr(2, None)))
wepw("missing_comments_2.epw", epw(header=hdr(7, None)))
wepw("missing_data_periods.epw", epw(header=hdr(8, None)))
wepw("comments_swapped.epw", epw(header=[*EPW_HEADER[:5], EPW_HEADER[6], EPW_HEADER[5], EPW_HEADER[7]]))
wepw("location_9_fields.epw", epw(header=hdr(1, "LOCATION,Tar Landing,NC,USA,invented,35.00,-77.00,-5.0,12.0")))
wepw("location_11_fields.epw", epw(header=hdr(1, EPW_HEADER[0] + ",extra")))
wepw("latitude_95.epw", epw(header=hdr(1, EPW_HEADER[0].replace("35.00", "95.00"))))
wepw("latitude_text.epw", epw(header=hdr(1, EPW_HEADER[0].replace("35.00", "N35"))))
wepw("longitude_200.epw", epw(header=hdr(1, EPW_HEADER[0].replace("-77.00", "200"))))
wepw("timezone_15.epw", epw(header=hdr(1, EPW_HEADER[0].replace("-5.0", "15.0"))))
wepw("timezone_text.epw", epw(header=hdr(1, EPW_HEADER[0].replace("-5.0", "EST"))))
wepw("elevation_12000.epw", epw(header=hdr(1, EPW_HEADER[0].replace(",12.0", ",12000"))))
wepw("two_periods.epw", epw(header=hdr(8, "DATA PERIODS,2,1,Data,Tuesday, 9/ 1, 9/ 1,More,Wednesday, 9/ 2, 9/ 2")))
wepw("four_records_an_hour.epw", epw(header=hdr(8, "DATA PERIODS,1,4,Data,Tuesday, 9/ 1, 9/ 1")))
wepw("zero_periods.epw", epw(header=hdr(8, "DATA PERIODS,0,1")))
wepw("periods_text.epw", epw(header=hdr(8, "DATA PERIODS,one,1,Data,Tuesday, 9/ 1, 9/ 1")))
wepw("records_per_hour_fraction.epw", epw(header=hdr(8, "DATA PERIODS,1,1.5,Data,Tuesday, 9/ 1, 9/ 1")))
wepw("data_periods_short.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Tuesday, 9/ 1")))
wepw("weekday_unknown.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Funday, 9/ 1, 9/ 1")))
wepw("wrong_weekday.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Monday, 9/ 1, 9/ 1")))
wepw("start_date_month_13.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Tuesday, 13/ 1, 9/ 1")))
wepw("end_date_sep_31.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Tuesday, 9/ 1, 9/31")))
wepw("wrong_start_date.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Monday, 8/31, 9/ 1")))
wepw("starts_at_hour_2.epw", epw(row_edit=lambda h, kw: kw.update(hour=h + 1) if h < 24 else kw.update(day=2, hour=1)))
wepw("ends_before_last_day.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Tuesday, 9/ 1, 9/ 2")))
wepw("ends_mid_day.epw", epw(rows=[epw_row(hour=h) for h in range(1, 19)]))
wepw("runs_past_end.epw", epw(rows=[epw_row(hour=h) for h in range(1, 25)] + [epw_row(day=2, hour=1)]))
wepw("header_only.epw", epw(rows=[]))
wepw("short_row.epw", epw(rows=[epw_row(hour=1), "2026,9,1,2,60,?,20"]))
wepw("long_row.epw", epw(rows=[epw_row(hour=1), epw_row(hour=2) + ",0"]))
wepw("hour_25.epw", epw(rows=[epw_row(hour=1), epw_row(hour=25)]))
wepw("hour_0.epw", epw(rows=[epw_row(hour=0)]))
wepw("month_13.epw", epw(row_edit=at_hour(3, month="13")))
wepw("day_32.epw", epw(row_edit=at_hour(3, day=32)))
wepw("feb_30.epw", epw(header=hdr(8, "DATA PERIODS,1,1,Data,Tuesday, 2/28, 2/28"),
                       rows=[epw_row(month="2", day=30, hour=1)]))
wepw("year_text.epw", epw(row_edit=at_hour(2, year="twenty")))
wepw("years_mixed.epw", epw(row_edit=at_hour(5, year="1999")))
wepw("minute_fraction.epw", epw(row_edit=at_hour(2, minute="60.5")))
wepw("dry_bulb_text.epw", epw(row_edit=at_hour(4, t="hot")))
wepw("dry_bulb_70.epw", epw(row_edit=at_hour(4, t="70")))
wepw("dry_bulb_fahrenheit.epw", epw(row_edit=lambda h, kw: kw.update(t=str(50 + h % 9), dew="40.0")))
wepw("rh_140.epw", epw(row_edit=at_hour(6, rh="140")))
wepw("pressure_40kpa.epw", epw(row_edit=at_hour(6, p="40000")))
wepw("wind_80.epw", epw(row_edit=at_hour(6, wind="80")))
wepw("precipitation_600.epw", epw(row_edit=at_hour(6, rain="600")))
wepw("dew_above_dry_bulb.epw", epw(row_edit=at_hour(7, t="15.0", dew="18.0")))
wepw("missing_first_dry_bulb.epw", epw(row_edit=at_hour(1, t="99.9")))
wepw("missing_last_rh_and_dew.epw", epw(row_edit=at_hour(24, rh="999", dew="99.9")))
wepw("long_dry_bulb_gap.epw", epw(row_edit=lambda h, kw: kw.update(t="99.9") if 5 <= h <= 9 else None))
wepw("duplicate_hour.epw", epw(row_edit=at_hour(8, hour=7)))
wepw("not_utf8.epw", epw().encode().replace(b"Invented corpus", b"Invent\xe9d corpus"))

# ---------------------------------------------------------------- TMY3
TMY_SITE = '723170,"CORPUS SITE",NC,-5.0,36.100,-79.950,273'
TMY_HEAD = "Date (MM/DD/YYYY),Time (HH:MM),Dry-bulb (C),Dew-point (C),RHum (%),Pressure (mbar),Wspd (m/s)"


def tmy_row(h, date="09/01/1988", time=None, t=None, dew="12.0", rh=None, p="1010", wind="2.0"):
    time = time if time is not None else f"{h:02}:00"
    t = t if t is not None else f"{20 + 0.2 * h:.1f}"
    rh = rh if rh is not None else str(50 + h)
    return ",".join([date, time, t, dew, rh, p, wind])


def tmy(site=TMY_SITE, head=TMY_HEAD, n=24, edit=None, rows=None):
    if rows is None:
        rows = []
        for h in range(1, n + 1):
            kw = {}
            if edit:
                edit(h, kw)
            rows.append(tmy_row(h, **kw))
    return "".join(x + "\n" for x in [site, head] + rows)


def tmy_at(h0, **changes):
    def e(h, kw):
        if h == h0:
            kw.update(changes)
    return e


def wtmy(name, text, command=WEATHER):
    add("tmy3", name, text, command)


# Six fields are not recognised as TMY3 by the format guess, so the format is given.
wtmy("site_6_fields.csv", tmy(site="723170,CORPUS,NC,-5.0,36.1,-79.9"), "weather summary --format tmy3 {file}")
wtmy("site_semicolon.csv", tmy().replace(",", ";"))
wtmy("header_semicolon.csv", tmy(head=TMY_HEAD.replace(",", ";")))
wtmy("row_semicolon.csv", tmy(rows=[tmy_row(1).replace(",", ";")]))
wtmy("site_line_only.csv", TMY_SITE + "\n")
wtmy("no_rows.csv", TMY_SITE + "\n" + TMY_HEAD + "\n")
wtmy("no_dry_bulb_column.csv", tmy(head=TMY_HEAD.replace("Dry-bulb (C)", "Drybulb (C)")))
wtmy("no_date_column.csv", tmy(head=TMY_HEAD.replace("Date (MM/DD/YYYY)", "Date")))
wtmy("no_pressure_column.csv", tmy(head=TMY_HEAD.replace("Pressure (mbar)", "Pressure (Pa)")))
wtmy("timezone_20.csv", tmy(site=TMY_SITE.replace("-5.0", "20.0")))
wtmy("elevation_text.csv", tmy(site=TMY_SITE.replace(",273", ",high")))
wtmy("month_13.csv", tmy(edit=tmy_at(3, date="13/01/1988")))
wtmy("iso_date.csv", tmy(edit=tmy_at(3, date="1988-09-01")))
wtmy("feb_29.csv", tmy(rows=[tmy_row(1, date="02/29/1988")]))
wtmy("time_25.csv", tmy(edit=tmy_at(3, time="25:00")))
wtmy("time_half_hour.csv", tmy(edit=tmy_at(3, time="02:30")))
wtmy("time_text.csv", tmy(edit=tmy_at(3, time="noon")))
wtmy("dry_bulb_text.csv", tmy(edit=tmy_at(4, t="x")))
wtmy("dry_bulb_70.csv", tmy(edit=tmy_at(4, t="70")))
wtmy("dry_bulb_fahrenheit.csv", tmy(edit=lambda h, kw: kw.update(t=str(50 + h % 9), dew="40")))
wtmy("rh_120.csv", tmy(edit=tmy_at(4, rh="120")))
wtmy("pressure_2000.csv", tmy(edit=tmy_at(4, p="2000")))
wtmy("wind_100.csv", tmy(edit=tmy_at(4, wind="100")))
wtmy("dew_above_dry_bulb.csv", tmy(edit=tmy_at(5, t="10.0", dew="14.0")))
wtmy("short_row.csv", tmy(rows=[tmy_row(1), "09/01/1988,02:00,20.0"]))
wtmy("extra_field.csv", tmy(rows=[tmy_row(1), tmy_row(2) + ",7"]))
wtmy("duplicate_hour.csv", tmy(edit=tmy_at(6, time="05:00")))
wtmy("gap_too_long.csv", tmy(rows=[tmy_row(1), tmy_row(2), tmy_row(9)]))
wtmy("missing_first_dry_bulb.csv", tmy(edit=tmy_at(1, t="-9900")))
wtmy("unterminated_quote.csv", tmy(rows=[tmy_row(1), '"' + tmy_row(2), tmy_row(3)]))
wtmy("not_utf8.csv", tmy().encode().replace(b"CORPUS SITE", b"CORPUS S\xcdTE"))

# ---------------------------------------------------------------- arrivals CSV
ARR_HEAD = "load_id,arrival,net_mass_kg,kernel_moisture_pct,notes\n"


def arr_row(i, arrival=None, mass="4200", moisture="20", notes="", lid=None):
    arrival = arrival or f"2026-09-{16 + i:02}T14:00:00-04:00"
    return ",".join([lid if lid is not None else f"C{i:03}", arrival, mass, moisture, notes]) + "\n"


def arr(rows_text):
    return ARR_HEAD + rows_text


def warr(name, text):
    add("arrivals", name, text, ARRIVALS)


warr("empty.csv", "")
warr("header_only.csv", ARR_HEAD)
warr("comments_only.csv", "# nothing delivered yet\n")
warr("semicolon.csv", (ARR_HEAD + arr_row(1)).replace(",", ";"))
warr("semicolon_rows.csv", ARR_HEAD + arr_row(1).replace(",", ";"))
warr("extra_field.csv", arr(arr_row(1) + arr_row(2).rstrip("\n") + ",late\n"))
warr("comma_in_notes.csv", arr(arr_row(1) + arr_row(2, notes="wet, muddy")))
warr("missing_moisture_column.csv", "load_id,arrival,net_mass_kg\nC001,2026-09-17T14:00:00-04:00,4200\n")
warr("missing_fields.csv", arr(arr_row(1) + "C002,2026-09-18T14:00:00-04:00,4200\n"))
warr("empty_id.csv", arr(arr_row(1) + arr_row(2, lid="")))
warr("duplicate_id.csv", arr(arr_row(1) + arr_row(2, lid="C001")))
warr("arrival_words.csv", arr(arr_row(1, arrival="tomorrow")))
warr("arrival_no_offset.csv", arr(arr_row(1, arrival="2026-09-17T14:00:00")))
warr("arrival_before_season.csv", arr(arr_row(1, arrival="2026-09-01T14:00:00-04:00")))
warr("arrival_after_season.csv", arr(arr_row(1, arrival="2026-12-01T14:00:00-04:00")))
warr("mass_text.csv", arr(arr_row(1, mass="heavy")))
warr("mass_negative.csv", arr(arr_row(1, mass="-300")))
warr("mass_zero.csv", arr(arr_row(1, mass="0")))
warr("mass_nan.csv", arr(arr_row(1, mass="NaN")))
warr("moisture_50.csv", arr(arr_row(1, moisture="50")))
warr("moisture_2.csv", arr(arr_row(1, moisture="2")))
warr("moisture_text.csv", arr(arr_row(1, moisture="wet")))
warr("not_utf8.csv", (ARR_HEAD + arr_row(1)).encode().replace(b"C001", b"C\xff01"))
warr("unclosed_quote_in_header.csv", 'load_id,"arrival,net_mass_kg\nC001,2026-09-17T14:00:00-04:00,4200,20,\n')
warr("tab_separated.csv", (ARR_HEAD + arr_row(1)).replace(",", "\t"))
warr("unterminated_quote.csv", arr(arr_row(1) + '"C002,2026-09-18T14:00:00-04:00,4200,20,\n' + arr_row(3)))

# ---------------------------------------------------------------- airflow survey CSV (airflow fit)
SURVEY = "airflow fit --survey {file} --container trailer-6m --fan vane-3kw --nx 8 --ny 4 --nz 6"
SURVEY_HEAD = "block,x0_m,x1_m,y0_m,y1_m,funnel_mouth_m2,reading_m3_per_min\n"


def survey_rows(edit=None, drop=None):
    xs = [0.0, 1.6, 3.2, 4.8, 6.4]
    ys = [0.0, 1.2, 2.4]
    rows = []
    for a in range(4):
        for b in range(2):
            r = [f"{'ABCD'[a]}{b + 1}", f"{xs[a]}", f"{xs[a + 1]}", f"{ys[b]}", f"{ys[b + 1]}", "0.25", "2.0"]
            if edit:
                edit(len(rows), r)
            rows.append(r)
    if drop is not None:
        del rows[drop]
    return "".join(",".join(r) + "\n" for r in rows)


def survey_cell(row, col, value):
    def e(k, r):
        if k == row:
            r[col] = value
    return SURVEY_HEAD + survey_rows(e)


def wsurvey(name, text):
    add("survey", name, text, SURVEY)


wsurvey("empty.csv", "")
wsurvey("header_only.csv", SURVEY_HEAD)
wsurvey("missing_block.csv", SURVEY_HEAD + survey_rows(drop=5))
wsurvey("negative_reading.csv", survey_cell(3, 6, "-0.4"))
wsurvey("reading_text.csv", survey_cell(3, 6, "calm"))
wsurvey("mouth_zero.csv", survey_cell(2, 5, "0"))
wsurvey("mouth_larger_than_block.csv", survey_cell(2, 5, "2.5"))
wsurvey("beyond_container.csv", survey_cell(7, 2, "7.0"))
wsurvey("wider_than_container.csv", survey_cell(7, 4, "3.0"))
wsurvey("overlap.csv", survey_cell(2, 1, "1.2"))
wsurvey("x1_before_x0.csv", survey_cell(4, 2, "3.0"))
wsurvey("duplicate_block.csv", survey_cell(6, 0, "A1"))
wsurvey("empty_block_name.csv", survey_cell(6, 0, ""))
wsurvey("missing_reading_column.csv",
        "".join(",".join(l.split(",")[:6]) + "\n" for l in (SURVEY_HEAD + survey_rows()).splitlines()))
wsurvey("semicolon.csv", (SURVEY_HEAD + survey_rows()).replace(",", ";"))
wsurvey("tab_separated.csv", (SURVEY_HEAD + survey_rows()).replace(",", "\t"))
wsurvey("extra_field.csv", SURVEY_HEAD + survey_rows().replace("D2,4.8,6.4,1.2,2.4,0.25,2.0", "D2,4.8,6.4,1.2,2.4,0.25,2.0,gusty"))
wsurvey("block_smaller_than_grid.csv",
        SURVEY_HEAD + survey_rows(lambda k, r: r.__setitem__(3, "0.1") if k in (0, 2, 4, 6) else None)
        + "".join(f"S{a},{x0},{x1},0.0,0.1,0.05,0.5\n"
                  for a, (x0, x1) in enumerate([(0.0, 1.6), (1.6, 3.2), (3.2, 4.8), (4.8, 6.4)])))
wsurvey("not_utf8.csv", (SURVEY_HEAD + survey_rows()).encode().replace(b"C1", b"C\xff"))


# ---------------------------------------------------------------- JSON model files
def load(path):
    with open(os.path.join(ROOT, path)) as f:
        return json.load(f)


def js(obj):
    return json.dumps(obj, indent=2) + "\n"


def variants(kind, command, base, changes):
    for name, change in changes:
        if isinstance(change, (str, bytes)):
            add(kind, name, change, command)
        else:
            obj = json.loads(json.dumps(base))
            change(obj)
            add(kind, name, js(obj), command)


def set_path(path, value):
    def f(obj):
        *head, last = path
        for k in head:
            obj = obj[k]
        obj[last] = value
    return f


def del_path(path):
    def f(obj):
        *head, last = path
        for k in head:
            obj = obj[k]
        del obj[last]
    return f


COMMON_JSON = [
    ("empty.json", ""),
    ("not_json.json", "name: peanut\n"),
    ("truncated.json", '{\n  "name": "x",\n  "description": "cut off here\n'),
    ("array.json", "[]\n"),
    ("not_utf8.json", b'{\n  "name": "\xff"\n}\n'),
]

crop = load("models/crops/peanut-inshell.json")
variants("crop", CROP, crop, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "tan")),
    ("missing_resistance.json", del_path(["resistance"])),
    ("dry_matter_fraction_2.json", set_path(["compartments", "hull", "dry_matter_fraction", "value"], 2.0)),
    ("dry_matter_fraction_text.json", set_path(["compartments", "hull", "dry_matter_fraction", "value"], "a quarter")),
    ("unknown_status.json", set_path(["compartments", "hull", "dry_matter_fraction", "status"], "guessed")),
    ("isotherm_form_unknown.json", set_path(["compartments", "hull", "isotherm", "form"], "bet")),
    ("missing_source.json", del_path(["compartments", "hull", "dry_matter_fraction", "source"])),
])

container = load("models/containers/trailer-6m.json")
variants("container", CONTAINER, container, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "red")),
    ("missing_length.json", del_path(["length_m"])),
    ("negative_width.json", set_path(["width_m"], -2.4)),
    ("zero_plenum.json", set_path(["plenum_height_m"], 0.0)),
    ("depth_above_wall.json", set_path(["fill", "depth_m"], 3.0)),
    ("fill_shape_unknown.json", set_path(["fill", "shape"], "heaped")),
    ("open_area_1_5.json", set_path(["floor", "open_area_fraction"], 1.5)),
    ("inlet_wall_unknown.json", set_path(["inlet", "wall"], "roof")),
    ("block_outside.json", set_path(["permeability", "blocks", 0, "x1_m"], 9.0)),
    ("length_text.json", set_path(["length_m"], "six")),
    ("plenum_model_unknown.json", set_path(["plenum"], {"model": "3d"})),
    ("plenum_cells_zero.json", set_path(["plenum"], {"model": "2d", "cells_per_column": 0})),
    ("plenum_mixing_length_5.json", set_path(["plenum"], {"model": "2d", "mixing_length_ratio": 5.0})),
    ("plenum_unknown_field.json", set_path(["plenum"], {"model": "duct", "colour": "red"})),
    ("inlet_wider_than_wall.json", set_path(["inlet", "width_m"], 3.0)),
    # the plenum geometry: side inlet, taper, baffles, blocked floor
    ("inlet_wall_side_duct.json", set_path(["inlet", "wall"], "left")),
    ("inlet_side_wider_than_wall.json", lambda o: (o["inlet"].update(wall="right", width_m=7.0),
                                                    o.update(plenum={"model": "2d"}))),
    ("inlet_side_offset_beyond_wall.json", lambda o: (o["inlet"].update(wall="left", offset_m=3.0),
                                                       o.update(plenum={"model": "2d"}))),
    ("inlet_taller_than_taper.json", lambda o: (o["inlet"].update(wall="rear"),
                                                 o.update(plenum_rear_height_m=0.3))),
    ("plenum_rear_height_zero.json", set_path(["plenum_rear_height_m"], 0.0)),
    ("baffle_outside.json", lambda o: o.update(plenum={"model": "2d"}, baffles=[
        {"x0_m": 1.0, "y0_m": 0.5, "x1_m": 1.0, "y1_m": 3.0}])),
    ("baffle_duct.json", set_path(["baffles"], [{"x0_m": 1.0, "y0_m": 0.5, "x1_m": 1.5, "y1_m": 1.0}])),
    ("baffles_close_off.json", lambda o: o.update(plenum={"model": "2d"}, baffles=[
        {"x0_m": 4.0, "y0_m": 0.0, "x1_m": 4.0, "y1_m": 1.3},
        {"x0_m": 4.0, "y0_m": 1.3, "x1_m": 6.4, "y1_m": 1.3}])),
    ("baffle_too_short.json", lambda o: o.update(plenum={"model": "2d"}, baffles=[
        {"x0_m": 1.0, "y0_m": 0.5, "x1_m": 1.0, "y1_m": 0.52}])),
    ("blocked_area_outside.json", set_path(["floor", "blocked_areas"], [
        {"x0_m": 6.0, "x1_m": 7.0, "y0_m": 0.0, "y1_m": 2.4}])),
    ("blocked_whole_floor.json", set_path(["floor", "blocked_areas"], [
        {"x0_m": 0.0, "x1_m": 3.2, "y0_m": 0.0, "y1_m": 2.4},
        {"x0_m": 3.0, "x1_m": 6.4, "y0_m": 0.0, "y1_m": 2.4}])),
    ("blocked_area_unknown_field.json", set_path(["floor", "blocked_areas"], [
        {"x0_m": 0.0, "x1_m": 1.0, "y0_m": 0.0, "y1_m": 2.4, "depth_m": 0.1}])),
])

fan = load("models/fans/vane-3kw.json")
variants("fan", FAN, fan, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "grey")),
    ("missing_points.json", del_path(["points"])),
    ("one_point.json", set_path(["points"], fan["points"][:1])),
    ("pressure_rising.json", set_path(["points", 2, "static_pressure_pa"], 500.0)),
    ("flow_not_increasing.json", set_path(["points", 3, "flow_m3_per_min"], 200.0)),
    ("negative_pressure.json", set_path(["points", 6, "static_pressure_pa"], -10.0)),
    ("zero_density.json", set_path(["rated_density_kg_per_m3"], 0.0)),
])

scenario = load("models/scenarios/demo-load.json")
scenario["weather"] = "../../../weather-samples/cypress-neck-2026/season_000.csv"
variants("scenario", SCENARIO, scenario, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "red")),
    ("missing_start.json", del_path(["start"])),
    ("start_words.json", set_path(["start"], "next Tuesday")),
    ("unknown_container.json", set_path(["container"], "barge-40m")),
    ("unknown_fan.json", set_path(["fan"], "jet-engine")),
    ("missing_weather_file.json", set_path(["weather"], "no-such-weather.csv")),
    ("weather_is_bad.json", set_path(["weather"], "../weather-csv/rh_140.csv")),
    ("moisture_80.json", set_path(["initial_kernel_moisture_pct"], 80.0)),
    ("strategy_unknown.json", set_path(["heater", "strategy"], "blast")),
    ("zero_time_step.json", set_path(["time_step_h"], 0.0)),
    ("grid_zero.json", set_path(["grid", "nx"], 0)),
    ("fan_efficiency_2.json", set_path(["fan_efficiency"], 2.0)),
    ("start_outside_weather.json", set_path(["start"], "2027-09-18T15:00:00-05:00")),
])

bp = load("models/buying-points/wrenfield.json")
variants("buying-point", BUYING_POINT, bp, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "red")),
    ("no_dryers.json", set_path(["dryers"], [])),
    ("duplicate_dryer_id.json", set_path(["dryers", 1, "id"], "W1")),
    ("season_start_words.json", set_path(["season", "start"], "harvest")),
    ("season_days_negative.json", set_path(["season", "days"], -5)),
    ("capacity_negative.json", set_path(["dryers", 0, "capacity_kg"], -5400)),
    ("heater_unknown.json", set_path(["dryers", 0, "heater"], "blast")),
    ("heater_object_form.json", set_path(["dryers", 0, "heater"], {"kind": "fixed-rise", "rise_k": 8.0})),
    ("stop_rule_unknown.json", set_path(["rules", "stop_rule"], "median")),
    ("fuel_natural_gas.json", set_path(["fuel"], "natural-gas")),
    ("target_50.json", set_path(["rules", "target_kernel_pct"], 50.0)),
])

# The rate-rule drier never opens a container, so this one needs the deep-bed drier.
add("buying-point", "unknown_container.json", js({**bp, "dryers": [{**bp["dryers"][0], "container": "barge-40m"}]}),
    BUYING_POINT.replace("rate-rule", "deep-bed"))

stats = load("weather-samples/cypress-neck-stats.json")
variants("climate-stats", STATS, stats, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "blue")),
    ("missing_months.json", del_path(["months"])),
    ("month_13.json", set_path(["months", 0, "month"], 13)),
    ("rh_mean_120.json", set_path(["months", 0, "rh_mean_pct"], 120.0)),
    ("sd_negative.json", set_path(["months", 1, "t_daily_sd_k"], -1.0)),
    ("probability_2.json", set_path(["months", 2, "p_wet_after_dry"], 2.0)),
    ("bad_offset.json", set_path(["utc_offset"], "EST")),
    ("persistence_1_5.json", set_path(["t_persistence"], 1.5)),
    ("start_month_missing.json", set_path(["months"], stats["months"][1:])),
])


# ---------------------------------------------------------------- moisture samples (calibrate)
SAMPLES = "calibrate --load demo-load {file}"
SMP_HEAD = "time,location,x_m,y_m,depth_m,measure,moisture_wb_pct,method\n"


def smp_row(time="2026-09-18T21:00:00-05:00", location="point", x="1.0", y="1.2", depth="0.2", measure="kernel",
            moisture="18.4", method="oven"):
    return ",".join([time, location, x, y, depth, measure, moisture, method]) + "\n"


def wsmp(name, text):
    add("samples", name, text, SAMPLES)


GOOD_SMP = smp_row() + smp_row(time="2026-09-19T03:00:00-05:00", location="composite", x="", y="", depth="",
                                moisture="16.9", method="meter")
wsmp("empty.csv", "")
wsmp("header_only.csv", SMP_HEAD)
wsmp("before_start.csv", SMP_HEAD + smp_row(time="2026-09-18T14:00:00-05:00") + GOOD_SMP)
wsmp("moisture_140.csv", SMP_HEAD + GOOD_SMP + smp_row(moisture="140"))
wsmp("moisture_text.csv", SMP_HEAD + GOOD_SMP + smp_row(moisture="wet"))
wsmp("no_offset.csv", SMP_HEAD + smp_row(time="2026-09-18T21:00:00") + GOOD_SMP)
wsmp("x_outside.csv", SMP_HEAD + GOOD_SMP + smp_row(x="9.0"))
wsmp("depth_negative.csv", SMP_HEAD + GOOD_SMP + smp_row(depth="-0.1"))
wsmp("composite_with_place.csv", SMP_HEAD + smp_row(location="composite") + GOOD_SMP)
wsmp("location_unknown.csv", SMP_HEAD + smp_row(location="corner") + GOOD_SMP)
wsmp("measure_unknown.csv", SMP_HEAD + smp_row(measure="hull") + GOOD_SMP)
wsmp("method_unknown.csv", SMP_HEAD + smp_row(method="guess") + GOOD_SMP)
wsmp("column_missing.csv", SMP_HEAD.replace(",method", "") + "2026-09-18T21:00:00-05:00,point,1,1,0.2,kernel,18\n")
wsmp("short_row.csv", SMP_HEAD + GOOD_SMP + "2026-09-19T05:00:00-05:00,point,1.0\n")
wsmp("semicolons.csv", SMP_HEAD.replace(",", ";") + GOOD_SMP.replace(",", ";"))
status = load("examples/at-the-dryer/status-bf06.json")
status["scenario"] = "demo-load"
status["observed_weather"] = "../../../examples/at-the-dryer/observed.csv"
status["forecast_weather"] = "../../../examples/at-the-dryer/forecast.csv"
variants("status", STATUS, status, COMMON_JSON + [
    ("unknown_field.json", set_path(["colour"], "red")),
    ("reading_before_on_air.json", set_path(["readings", 0, "time"], "2026-09-18T14:00:00-05:00")),
    ("reading_after_observations.json", set_path(["readings", 1, "time"], "2026-09-19T09:00:00-05:00")),
    ("net_mass_above_container.json", set_path(["net_mass_kg"], 20000)),
    ("moisture_140.json", set_path(["readings", 1, "moisture_pct"], 140)),
    ("part_unknown.json", set_path(["readings", 0, "part"], "hull")),
    ("no_readings.json", set_path(["readings"], [])),
    ("on_air_words.json", set_path(["on_air"], "after lunch")),
    ("forecast_gap.json", set_path(["forecast_weather"], "forecast-gap.csv")),
])
# The forecast of forecast_gap.json, starting four hours after the observations end; as a case of its own it is a
# weather file given where the status file belongs.
add("status", "forecast-gap.csv", "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,pressure_kpa,rain_mm\n"
    + "".join(f"2026-09-19T{h:02}:00:00-05:00,22.0,80,101.1,0\n" for h in range(9, 20)), STATUS)

# ---------------------------------------------------------------- unreadable paths (not files in the corpus)
SPECIAL = [
    ("/dev/zero", WEATHER),
    ("/dev/zero", ARRIVALS),
    ("/dev/zero", CROP),
    ("/dev/zero", STATS),
    ("missing/no-such-file.csv", WEATHER),
    ("epw", WEATHER),
]


def main():
    old = {}
    if os.path.exists(MANIFEST):
        for line in open(MANIFEST, encoding="utf-8"):
            if line.startswith("#") or not line.strip():
                continue
            f, code, cmd, msg = line.rstrip("\n").split("\t")
            old[(f, cmd)] = (code, msg)
    seen = set()
    rows = []
    for rel, data, cmd in cases:
        assert rel not in seen, rel
        seen.add(rel)
        path = os.path.join(CORPUS, rel)
        os.makedirs(os.path.dirname(path), exist_ok=True)
        with open(path, "wb") as f:
            f.write(data)
        rows.append((rel, cmd))
    rows += SPECIAL
    with open(MANIFEST, "w", encoding="utf-8") as out:
        out.write("# The bad-input corpus: file (under tests/bad-inputs/, or an absolute path), exit code, command "
                  "({file} = that path, {out} = a fresh folder), the whole expected stderr (one line).\n"
                  "# Made by scripts/bad_inputs.py; messages blessed with DRYFRONT_BLESS=1 cargo test --release "
                  "--test bad_inputs and read one by one.\n")
        for rel, cmd in rows:
            code, msg = old.get((rel, cmd), ("2", ""))
            out.write(f"{rel}\t{code}\t{cmd}\t{msg}\n")
    print(f"{len(cases)} files, {len(rows)} manifest rows")


if __name__ == "__main__":
    main()
