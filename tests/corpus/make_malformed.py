"""Writes the malformed-input corpus: each file and the error it must produce (expected.tsv: file, line,
column, text the reason must contain; "OK n" for files that must give n observations). The 200 MB file is
made by the test itself (sparse), not committed.

Run:  python3 tests/corpus/make_malformed.py
"""
import os

HERE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "malformed")
H = "# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|mag|band\n"
G = "qkc0m4r|CCD|TV1|2027-02-26T03:00:00.000Z|120.5|+10.25|0.2|0.2|20.1|G\n"


def row(**kw):
    f = {"trkSub": "qkc0m4r", "mode": "CCD", "stn": "TV1", "obsTime": "2027-02-26T03:10:00.000Z",
         "ra": "120.51", "dec": "+10.26", "rmsRA": "0.2", "rmsDec": "0.2", "mag": "20.1", "band": "G"}
    f.update(kw)
    return "|".join(f.values()) + "\n"


def o80(id_="     qkc0m4r", kind="C", date="2027 02 26.12500", ra="08 02 00.00", dec="+10 15 00.0",
        mag="20.1 G", stn="TV1"):
    s = f"{id_:<12}  {kind}{date:<17}{ra:<12}{dec:<12}         {mag:<6}      {stn:>3}"
    return s.ljust(80) + "\n"


def X(body):
    return ('<?xml version="1.0" encoding="UTF-8"?>\n<ades version="2022">\n' + body + "</ades>\n").encode()


def xrec(**kw):
    f = {"trkSub": "qkc0m4r", "mode": "CCD", "stn": "TV1", "obsTime": "2027-02-26T03:00:00.000Z",
         "ra": "120.5", "dec": "+10.25", "rmsRA": "0.2", "rmsDec": "0.2", "mag": "20.1", "band": "G"}
    f.update(kw)
    return "<optical>" + "".join(f"<{k}>{v}</{k}>" for k, v in f.items()) + "</optical>\n"

CASES = [
    ("empty.psv", b"", 0, "", "empty file"),
    ("comments_only.psv", b"# version=2022\n# nothing here\n", 0, "", "no observations in file"),
    ("binary.bin", b"\x7fELF\x02\x01\x01\x00\x00\x00", 0, "", "binary file"),
    ("latin1.psv", (H + "qkc0m4r|CCD|TV1|2027-02-26T03:00:00Z|120.5|+10.0|0.2|0.2|20.1|G\xe9\n").encode("latin-1"), 0, "", "not UTF-8"),
    ("bom.psv", ("\ufeff" + H + G).encode(), "OK", 1, ""),
    ("crlf.psv", (H + G + row()).replace("\n", "\r\n").encode(), "OK", 2, ""),
    ("truncated_line.psv", (H + G + "qkc0m4r|CCD|TV1|2027-02-2").encode(), 4, "", "fields where the header has 10"),
    ("feb30.psv", (H + row(obsTime="2027-02-30T03:00:00Z")).encode(), 3, "obsTime", "2027-02-30 is not a date"),
    ("feb29_2027.psv", (H + row(obsTime="2027-02-29T03:00:00Z")).encode(), 3, "obsTime", "2027-02-29 is not a date"),
    ("month13.psv", (H + row(obsTime="2027-13-01T03:00:00Z")).encode(), 3, "obsTime", "is not a date"),
    ("hour24.psv", (H + row(obsTime="2027-02-26T24:00:00Z")).encode(), 3, "obsTime", "is not a time of day"),
    ("minute60.psv", (H + row(obsTime="2027-02-26T03:60:00Z")).encode(), 3, "obsTime", "is not a time of day"),
    ("second60.psv", (H + row(obsTime="2027-02-26T23:59:60Z")).encode(), 3, "obsTime", "leap second"),
    ("slashes.psv", (H + row(obsTime="2027/02/26 03:00")).encode(), 3, "obsTime", "is not an ISO 8601 UTC time"),
    ("time_garbage.psv", (H + row(obsTime="2027-02-26T03:00:00Zxyz")).encode(), 3, "obsTime", "is not an ISO 8601"),
    ("time_empty.psv", (H + row(obsTime="")).encode(), 3, "obsTime", "missing time"),
    ("escape_in_time.psv", (H + row(obsTime="2027-02-26\tT03\x1b[31m:00Z")).encode(), 3, "obsTime", "is not an ISO 8601"),
    # Found by the fuzzer: a tab inside obsTime once reached the error text unsanitised.
    ("fuzz_tab_in_time.psv", b'trkSub|stn|obsTime|ra|dec|sys|ctr\nK|TV97220|-02-26TIIIIIIIIIIIIIIIIIIIIIIIIIIIIII\tno oIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIIII03:00:00Z|1|2|ICRF_KM|399\n', 2, "obsTime", "is not an ISO 8601"),
    ("before_1972.psv", (H + row(obsTime="1969-07-20T20:17:00Z")).encode(), 3, "obsTime", "before 1972-01-01"),
    ("ra360.psv", (H + row(ra="360.0")).encode(), 3, "ra", "outside 0 ≤ RA < 360°"),
    ("ra_negative.psv", (H + row(ra="-0.5")).encode(), 3, "ra", "outside 0 ≤ RA < 360°"),
    ("ra_text.psv", (H + row(ra="abc")).encode(), 3, "ra", "'abc' is not a number"),
    ("ra_comma.psv", (H + row(ra="120,5")).encode(), 3, "ra", "'120,5' is not a number"),
    ("ra_nan.psv", (H + row(ra="NaN")).encode(), 3, "ra", "is not a usable number"),
    ("ra_huge.psv", (H + row(ra="1e300")).encode(), 3, "ra", "is not a usable number"),
    ("ra_missing.psv", (H + row(ra="")).encode(), 3, "ra", "missing"),
    ("dec_over_90.psv", (H + row(dec="90.5")).encode(), 3, "dec", "outside ±90°"),
    ("dec_under_90.psv", (H + row(dec="-91")).encode(), 3, "dec", "outside ±90°"),
    ("dec_inf.psv", (H + row(dec="inf")).encode(), 3, "dec", "is not a usable number"),
    ("rms_zero.psv", (H + row(rmsRA="0")).encode(), 3, "rmsRA", "must be positive"),
    ("rms_negative.psv", (H + row(rmsDec="-0.2")).encode(), 3, "rmsDec", "must be positive"),
    ("mag_text.psv", (H + row(mag="bright")).encode(), 3, "mag", "'bright' is not a number"),
    ("unknown_site.psv", (H + row(stn="QQQ")).encode(), 3, "stn", "unknown site code 'QQQ'"),
    ("escape_in_site.psv", (H + row(stn="Q\x1b[2JQ")).encode(), 3, "stn", "unknown site code 'QQ'"),
    ("empty_id.psv", (H + row(trkSub="")).encode(), 3, "trkSub", "no permID, provID or trkSub"),
    ("too_many_fields.psv", (H + row().rstrip("\n") + "|extra\n").encode(), 3, "", "11 fields where the header has 10"),
    ("too_few_fields.psv", (H + "qkc0m4r|CCD|TV1\n").encode(), 3, "", "3 fields where the header has 10"),
    ("duplicate_column.psv", b"trkSub|stn|obsTime|ra|dec|ra\nK|TV1|2027-02-26T03:00:00Z|1|2|3\n", 1, "ra", "column appears twice"),
    ("missing_ra.psv", b"trkSub|stn|obsTime|dec\nK|TV1|2027-02-26T03:00:00Z|2\n", 1, "", "lacks required column(s): ra"),
    ("missing_time.psv", b"trkSub|stn|ra|dec\nK|TV1|1|2\n", 1, "", "lacks required column(s): obsTime"),
    ("missing_stn.psv", b"trkSub|obsTime|ra|dec\nK|2027-02-26T03:00:00Z|1|2\n", 1, "", "lacks required column(s): stn"),
    ("missing_ids.psv", b"mode|stn|obsTime|ra|dec\nCCD|TV1|2027-02-26T03:00:00Z|1|2\n", 1, "", "permID, provID or trkSub"),
    ("header_no_data.psv", H.encode(), 0, "", "header but no data lines"),
    ("sys_without_pos.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr\nK|TV9|2027-02-26T03:00:00Z|1|2|ICRF_KM|399\n", 2, "pos1", "without pos1, pos2, pos3"),
    ("ctr_unsupported.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|ICRF_KM|301|1|2|3\n", 2, "ctr", "centre 301 is not supported"),
    ("ctr_text.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|ICRF_KM|moon|1|2|3\n", 2, "ctr", "is not a body code"),
    ("sys_unsupported.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|ECLIPTIC_KM|399|1|2|3\n", 2, "sys", "is not supported (use ICRF_KM or ICRF_AU)"),
    ("rover_latitude_95.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|WGS84|399|10|95|100\n", 2, "pos2", "latitude 95 is outside"),
    ("rover_altitude_1e9.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|WGS84|399|10|45|1e9\n", 2, "pos3", "altitude 1000000000 m is outside"),
    ("space_observer_far.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|ICRF_KM|399|9e14|0|0\n", 2, "pos1", "from the geocentre is outside"),
    ("space_observer_inside_earth.psv", b"trkSub|stn|obsTime|ra|dec|sys|ctr|pos1|pos2|pos3\nK|TV9|2027-02-26T03:00:00Z|1|2|ICRF_KM|399|100|0|0\n", 2, "pos1", "from the geocentre is outside"),
    ("rms_tiny.psv", (H + row(rmsRA="5e-324")).encode(), 3, "rmsRA", "is outside the accepted"),
    ("rms_huge.psv", (H + row(rmsDec="1e14")).encode(), 3, "rmsDec", "is outside the accepted"),
    ("corr_out_of_range.psv", b"trkSub|stn|obsTime|ra|dec|rmsCorr\nK|TV1|2027-02-26T03:00:00Z|1|2|1.5\n", 2, "rmsCorr", "outside ±1"),
    ("prose.txt", b"Dear observers, tonight's list is attached.\nRegards\n", 0, "", "format not recognised"),
    ("obs80_short.txt", (o80() + "     qkc0m4r  C2027 02 26.13\n").encode(), 2, "1-80", "80 are needed"),
    ("obs80_bad_date.txt", o80(date="2027 02 30.12500").encode(), 1, "16-32", "2027-02-30 is not a date"),
    ("obs80_bad_day.txt", o80(date="2027 02 xx.12500").encode(), 1, "16-32", "is not a date"),
    ("obs80_ra_24h.txt", o80(ra="24 00 00.00").encode(), 1, "33-44", "outside 0 ≤ RA < 24h"),
    ("obs80_ra_text.txt", o80(ra="aa bb cc.dd").encode(), 1, "33-44", "is not a right ascension"),
    ("obs80_dec_over_90.txt", o80(dec="+91 00 00.0").encode(), 1, "45-56", "outside ±90°"),
    ("obs80_missing_second.txt", o80(kind="S").encode(), 1, "15", "second line missing"),
    ("obs80_stray_second.txt", (o80() + o80(kind="s")).encode(), 2, "15", "without its first line"),
    ("obs80_bad_unit.txt", (o80(kind="S") + o80(kind="s", ra="9")).encode(), 2, "33", "unit flag"),
    ("obs80_bad_mag.txt", o80(mag="xx.x G").encode(), 1, "66-70", "is not a magnitude"),
    ("obs80_no_site.txt", o80(stn="").encode(), 1, "78-80", "no site code"),
    ("obs80_long.txt", (o80().rstrip("\n") + "TRAILING TEXT\n").encode(), 1, "81", "where 80 are expected"),
    ("obs80_no_designation.txt", o80(id_="").encode(), 1, "1-12", "no designation"),
    # ADES XML: the same checks and messages as PSV, with the line of the record.
    ("xml_good.xml", X(xrec() + xrec(obsTime="2027-02-26T03:10:00.000Z", ra="120.51")), "OK", 2, ""),
    ("xml_feb30.xml", X(xrec(obsTime="2027-02-30T03:00:00Z")), 3, "obsTime", "2027-02-30 is not a date"),
    ("xml_ra360.xml", X(xrec(ra="360.0")), 3, "ra", "outside 0 ≤ RA < 360°"),
    ("xml_unclosed.xml", b'<?xml version="1.0"?>\n<ades version="2022">\n<optical><stn>TV1</stn>\n</ades>\n', 4, "", "not well-formed XML"),
    ("xml_doctype_bomb.xml", b'<?xml version="1.0"?>\n<!DOCTYPE ades [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>\n<ades version="2022"><optical><trkSub>&b;</trkSub></optical></ades>\n', 2, "", "document type declarations are not accepted"),
    ("xml_unknown_entity.xml", X(xrec(trkSub="K27&x;01")), 3, "trkSub", "unknown entity '&x;'"),
    ("xml_wrong_root.xml", b'<?xml version="1.0"?>\n<votable><optical/></votable>\n', 2, "", "root element is 'votable'"),
    ("xml_radar.xml", X(b"<radar><permID>1</permID><obsTime>2027-02-26T03:00:00Z</obsTime></radar>\n".decode()), 3, "", "'radar' records are not used"),
    ("xml_twice.xml", X(xrec().replace("<stn>TV1</stn>", "<stn>TV1</stn><stn>TV2</stn>")), 3, "stn", "element appears twice"),
    ("xml_escape_in_id.xml", X(xrec(trkSub="K27&#x1b;[31mk01")), "OK", 1, ""),
    ("xml_no_id.xml", X(xrec().replace("<trkSub>qkc0m4r</trkSub>", "")), 3, "trkSub", "no permID, provID or trkSub"),
]



def main():
    os.makedirs(HERE, exist_ok=True)
    with open(os.path.join(HERE, "expected.tsv"), "w") as fh:
        fh.write("file\tline\tcolumn\texpect\n")
        for name, data, line, col, expect in CASES:
            with open(os.path.join(HERE, name), "wb") as f:
                f.write(data)
            if line == "OK":
                fh.write(f"{name}\tOK\t\t{col}\n")
            else:
                fh.write(f"{name}\t{line}\t{col}\t{expect}\n")
    print(len(CASES), "cases")


if __name__ == "__main__":
    main()
