#!/usr/bin/env python3
"""Writes the small bad (and awkward-but-valid) input files used by
cmd/bandsolve/badinput_test.go. Plain Python 3, no packages; run once:
    python3 make_bad.py
The numbers are an invented A -> B change in 12 channels x 8 spectra; the
exact values do not matter, only that good.csv is a valid input and each
bad_*.csv breaks it in one way."""
import math

axis = [1000 + 2 * i for i in range(12)]
times = [0, 60, 120, 180, 240, 300, 360, 420]


def g(x, c, w):
    return math.exp(-((x - c) / w) ** 2)


def beam(x, t, j):
    a = math.exp(-t / 150.0)
    A = 0.4 * (a * g(x, 1008, 4) + (1 - a) * g(x, 1016, 4))
    # deterministic small wiggle standing in for noise
    wig = 1 + 1e-3 * math.sin(7.3 * j + 1.7 * x + 0.01 * t)
    return 1000 * 10 ** (-A) * wig


rows = [[beam(x, t, j) for t in times] for j, x in enumerate(axis)]


def matrix(sep=",", eol="\n", head="wavenumber", cell=lambda v: "%.6f" % v,
           trailing="", pre="", rows=rows, axis=axis, times=times):
    out = pre
    out += head + sep + sep.join(str(t) for t in times) + trailing + eol
    for x, r in zip(axis, rows):
        out += str(x) + sep + sep.join(cell(v) for v in r) + trailing + eol
    return out


def write(name, text, mode="w"):
    with open(name, "w", newline="") as f:
        f.write(text)


def modify(i, j, val):
    r = [list(x) for x in rows]
    return r, (i, j, val)


good = matrix()
write("good.csv", good)
# awkward but valid: same numbers
write("ok_bom_crlf.csv", "\ufeff" + matrix(eol="\r\n"))
write("ok_comments_blank.csv", "# exported by hand\n\n" + matrix().replace("\n1006", "\n\n# a comment\n1006") + "\n\n\n")
write("ok_trailing_sep.csv", matrix(trailing=",") + ",,,,,,,,,\n")
write("ok_semicolon.csv", matrix(sep=";"))
write("ok_tab.tsv", matrix(sep="\t"))
write("ok_quoted_title.csv", '"Series of run 7, cell B"\n' + matrix(head='"wavenumber"'))

lines = good.split("\n")
write("bad_empty.csv", "")
write("bad_blank_lines_only.csv", "\n\n   \n# nothing here\n")
write("bad_header_only.csv", lines[0] + "\n")
write("bad_numbers_no_header.csv", "\n".join(lines[1:]))
# ragged: line 4 loses its last cell
l = list(lines); l[3] = l[3].rsplit(",", 1)[0]; write("bad_ragged.csv", "\n".join(l))
l = list(lines); c = l[4].split(","); c[3] = "abc"; l[4] = ",".join(c); write("bad_text_cell.csv", "\n".join(l))
l = list(lines); c = l[5].split(","); c[2] = "NaN"; l[5] = ",".join(c); write("bad_nan.csv", "\n".join(l))
l = list(lines); c = l[5].split(","); c[6] = "-Inf"; l[5] = ",".join(c); write("bad_inf.csv", "\n".join(l))
l = list(lines); c = l[6].split(","); c[4] = "1e400"; l[6] = ",".join(c); write("bad_huge.csv", "\n".join(l))
l = list(lines); c = l[3].split(","); c[1] = ""; l[3] = ",".join(c); write("bad_empty_cell.csv", "\n".join(l))
# Decimal commas are unambiguous with ";" separators, so this one is valid.
write("ok_decimal_comma_semicolon.csv", matrix(sep=";", cell=lambda v: ("%.6f" % v).replace(".", ",")))
write("bad_decimal_comma_commas.csv", matrix(sep=",", cell=lambda v: ("%.6f" % v).replace(".", ",")))
# axis faults
ax = list(axis); ax[5] = ax[4]; write("bad_dup_axis.csv", matrix(axis=ax))
ax = list(axis); ax[6], ax[7] = ax[7], ax[6]; write("bad_nonmono_axis.csv", matrix(axis=ax))
# time faults
tm = list(times); tm[3] = tm[2]; write("bad_dup_time.csv", matrix(times=tm))
write("bad_text_time.csv", good.replace(",180,", ",3 min,", 1))
# one spectrum per line: the header is the axis, the first column the times
write("bad_transposed.csv", "time_s," + ",".join(str(x) for x in axis) + "\n" +
      "".join(str(t) + "," + ",".join("%.6f" % rows[j][i] for j in range(len(axis))) + "\n" for i, t in enumerate(times)))
# single beams that cannot be single beams
r = [list(x) for x in rows]; r[4][2] = 0.0; write("bad_zero_beam.csv", matrix(rows=r))
r = [list(x) for x in rows]; r[7][5] = -12.5; write("bad_negative_beam.csv", matrix(rows=r))
# shapes
write("bad_one_point.csv", "\n".join(lines[:2]) + "\n")
write("bad_one_spectrum.csv", "".join(",".join(x.split(",")[:2]) + "\n" for x in lines if x))
with open("bad_binary.csv", "wb") as f:
    f.write(bytes((i * 73 + 11) % 256 for i in range(600)))
# blanks
blank = "wavenumber,intensity\n" + "".join("%d,%.3f\n" % (x, 1000.0) for x in axis)
write("blank_good.csv", blank)
write("bad_blank_short.csv", "wavenumber,intensity\n" + "".join("%d,%.3f\n" % (x, 1000.0) for x in axis[:7]))
write("bad_blank_shifted.csv", "wavenumber,intensity\n" + "".join("%d,%.3f\n" % (x + 1, 1000.0) for x in axis))
write("bad_blank_absorbance.csv", "wavenumber,absorbance\n" + "".join("%d,%.3f\n" % (x, -0.01 * (i + 1)) for i, x in enumerate(axis)))
# second experiment on another axis
write("bad_other_axis.csv", matrix(axis=[x + 0.5 for x in axis]))
# absorbance with all-zero rows before anything is present (closure cannot hold)
absr = [[0.0 if t < 120 else -math.log10(beam(x, t, j) / 1000) for t in times] for j, x in enumerate(axis)]
write("bad_closure_zero_rows.csv", matrix(rows=absr, cell=lambda v: "%.6f" % v))
# identical single beams: nothing happened
same = [[1000 * (1 + 0.1 * math.sin(x)) for t in times] for x in axis]
write("ok_no_change.csv", matrix(rows=same))
# profiles for --init
write("bad_init_zero_column.csv", "time,first,second\n" + "".join("%d,%.4f,0\n" % (t, math.exp(-t / 150.0)) for t in times))
write("bad_init_three_columns.csv", "time,a,b,c\n" + "".join("%d,1,2,3\n" % t for t in times))
# malformed JCAMP-DX: no ##XYDATA, no ##END
write("bad_record.jdx", "##TITLE=broken\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n##YUNITS=TRANSMITTANCE\n##NPOINTS=5\n1000 1 2 3\n")
# malformed command file
write("bad_command.txt", "data good.csv\nkind single-beam\ncomponents three\n")
