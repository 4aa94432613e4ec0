"""The JCAMP-DX reader against the published JCAMP-DX test files.

Sources (fetched at test time by scripts/fetch_reference_data.py, never committed):

* "JCAMP-DX.org official test files, via the jcamp 1.3.2 sdist" - the ISAS Dortmund set in
  data/jcamp-dx.org_official_test_data/ (its DX-DIR.TXT lists what each file is);
* "R. J. Lancashire's test set, via the jcamp 1.3.2 sdist" - data/Robert_J_Lancashire_test_data/
  (several files carry the same spectrum in different encodings);
* "gas-phase infrared spectra, via the jcamp 1.3.2 sdist" - data/infrared_spectra/.

Outcome of every file of the two test sets (the FILES table below is the executable form):

=====================  ==========================================  ==============================
file                   what it exercises                           outcome
=====================  ==========================================  ==============================
BRUKER1.JCM            IR, DIFDUP, %T, X as big integers, XFACTOR  read, 3735 points
BRUKER2.JCM            the same spectrum as absorbance             read, 3735 points
LABCALC.DX             IR, AFFN 10-digit integers, YFACTOR 1e-9    read, 3435 points
PE1800.DX              IR, PAC (+nnnn), fraction T                 read, 3301 points
SPECFILE.DX            IR, DIFDUP with S after every value; a      read, 1801 points
                       lone "31999@" line after the last point
                       (accepted as a terminator, see jcamp.py)
BRUKAFFN/DIF/PAC/SQZ   NMR in AFFN, DIF, PAC, SQZ                  refused: NMR SPECTRUM
BRUKNTUP, TESTNTUP     NMR NTUPLES                                 refused: NMR SPECTRUM
TEST32, TESTSPEC       NMR, 32-bit and 16-bit DIFDUP               refused: NMR SPECTRUM
TESTFID                NMR FID NTUPLES                             refused: NMR FID
IMSDEMO, IMS_TEST1     ion mobility                                refused: ION MOBILITY SPECTRUM
ISAS_CDX.DX            LINK: structure + NMR peak assignments      refused: both named
ISAS_MS1/2/3.DX        mass spectra (peak table, continuous, NTUP) refused: MASS SPECTRUM
DX-DIR.TXT             directory listing, not JCAMP-DX             refused (parse_jcamp: no
                                                                   labelled records)
compound.jdx           LINK with 5 IR blocks (DIFDUP)              read, 5 spectra
dupdec1/2.jdx          IR DIFDUP, decreasing X, %T                 read, 3951 points
dupinc2.jdx            IR DIFDUP, increasing X (indene)            read, 3734 points
fixdec1.jdx            IR fixed AFFN, decreasing X                 read, 3951 points
fixinc1.jdx            IR fixed AFFN, XFACTOR 0.964                read, 3736 points
fixinc2.jdx            IR AFFN absorbance (indene), ^Z at the end  read, 3601 points
jtpolys / jtpolysd     IR polystyrene AFFN / DIFDUP                read, 1844 points each
pacdec1.jdx            IR PAC, percent T (PE1800's spectrum)       read, 3301 points
sqzdupd1.jdx           IR SQZ with DUP, 18669 points, T to 1.505   read, 18669 points
xyinc1.jdx             IR one X,Y pair per line (indene);          read, 3601 points
                       a label whose value is "##XYDATA="
blckpac1.jdx           LINK of UV/VIS blocks                       refused: UV/VIS SPECTRUM
blckpkt1.jdx           LINK of mass-spectrum peak tables           refused: MASS SPECTRUM
coffhd.jdx             gas chromatogram peak table                 refused: GAS CHROMATOGRAPH
dupinc1.jdx            UV-visible DIFDUP                           refused: UV-VISIBLE SPECTRUM
fixdec2, o01-o10       NMR (XYDATA and NTUPLES)                    refused: NMR SPECTRUM
fixdec3, fixinc3       simple graph                                refused: SIMPLE GRAPH
fixinc4, fixinc5       simulation, pH titration                    refused: SIMULATION, PH TITR.
mactab1/2.jdx          mass spectra with Mac (CR) line ends        refused: MASS SPECTRUM
ofid1-4.jdx            NMR FID NTUPLES                             refused: NMR FID
pktab1/2.jdx           mass-spectrum peak tables                   refused: MASS SPECTRUM
sqzdec1.jdx            NMR SQZ (BRUKSQZ.DX's data)                 refused: NMR SPECTRUM
xyinc2.jdx             EPR                                         refused: EPR SPECTRUM
=====================  ==========================================  ==============================

No file of the two sets is infrared in a form reflib does not read (the NTUPLES files are all NMR
or mass spectra). The non-infrared ASDF files still check the decoder through
:func:`reflib.io.jcamp.xydata_ordinates` (test_bruker_nmr_encodings_agree).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError, ReflibError
from reflib.io import read_all
from reflib.io.jcamp import parse_jcamp, xydata_ordinates
from reflib.spectrum import PeakList, Spectrum

pytestmark = pytest.mark.outside

OFFICIAL = "jcamp-dx.org_official_test_data"
LANCASHIRE = "Robert_J_Lancashire_test_data"

# (folder, file, expected: number of infrared blocks read, or the fragment of the refusal)
FILES = [
    (OFFICIAL, "BRUKER1.JCM", 1),
    (OFFICIAL, "BRUKER2.JCM", 1),
    (OFFICIAL, "LABCALC.DX", 1),
    (OFFICIAL, "PE1800.DX", 1),
    (OFFICIAL, "SPECFILE.DX", 1),
    (OFFICIAL, "BRUKAFFN.DX", "this is a NMR SPECTRUM file, not infrared"),
    (OFFICIAL, "BRUKDIF.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "BRUKNTUP.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "BRUKPAC.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "BRUKSQZ.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "TEST32.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "TESTSPEC.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "TESTNTUP.DX", "this is a NMR SPECTRUM file"),
    (OFFICIAL, "TESTFID.DX", "this is a NMR FID file"),
    (OFFICIAL, "IMSDEMO.DX", "this is an ION MOBILITY SPECTRUM file"),
    (OFFICIAL, "IMS_TEST1.DX", "this is an ION MOBILITY SPECTRUM file"),
    (OFFICIAL, "ISAS_CDX.DX", "CHEMICAL STRUCTURE, NMR PEAK ASSIGNMENTS data, not infrared"),
    (OFFICIAL, "ISAS_MS1.DX", "this is a MASS SPECTRUM file"),
    (OFFICIAL, "ISAS_MS2.DX", "this is a CONTINUOUS MASS SPECTRUM file"),
    (OFFICIAL, "ISAS_MS3.DX", "this is a MASS SPECTRUM file"),
    (OFFICIAL, "DX-DIR.TXT", "no JCAMP-DX labelled records"),
    (LANCASHIRE, "compound.jdx", 5),
    (LANCASHIRE, "dupdec1.jdx", 1),
    (LANCASHIRE, "dupdec2.jdx", 1),
    (LANCASHIRE, "dupinc2.jdx", 1),
    (LANCASHIRE, "fixdec1.jdx", 1),
    (LANCASHIRE, "fixinc1.jdx", 1),
    (LANCASHIRE, "fixinc2.jdx", 1),
    (LANCASHIRE, "jtpolys.jdx", 1),
    (LANCASHIRE, "jtpolysd.jdx", 1),
    (LANCASHIRE, "pacdec1.jdx", 1),
    (LANCASHIRE, "sqzdupd1.jdx", 1),
    (LANCASHIRE, "xyinc1.jdx", 1),
    (LANCASHIRE, "blckpac1.jdx", "this is a UV/VIS SPECTRUM file"),
    (LANCASHIRE, "blckpkt1.jdx", "this is a MASS SPECTRUM file"),
    (LANCASHIRE, "coffhd.jdx", "this is a GAS CHROMATOGRAPH file"),
    (LANCASHIRE, "dupinc1.jdx", "this is a UV-VISIBLE SPECTRUM file"),
    (LANCASHIRE, "fixdec2.jdx", "this is a NMR SPECTRUM file"),
    (LANCASHIRE, "fixdec3.jdx", "this is a SIMPLE GRAPH file"),
    (LANCASHIRE, "fixinc3.jdx", "this is a SIMPLE GRAPH file"),
    (LANCASHIRE, "fixinc4.jdx", "this is a SIMULATION file"),
    (LANCASHIRE, "fixinc5.jdx", "this is a PH TITRATION file"),
    (LANCASHIRE, "mactab1.jdx", "this is a MASS SPECTRUM file"),
    (LANCASHIRE, "mactab2.jdx", "this is a MASS SPECTRUM file"),
    *[(LANCASHIRE, f"o{i:02d}.jdx", "this is a NMR SPECTRUM file") for i in range(1, 11)],
    *[(LANCASHIRE, f"ofid{i}.jdx", "this is a NMR FID file") for i in range(1, 5)],
    (LANCASHIRE, "pktab1.jdx", "this is a MASS SPECTRUM file"),
    (LANCASHIRE, "pktab2.jdx", "this is a MASS SPECTRUM file"),
    (LANCASHIRE, "sqzdec1.jdx", "this is a NMR SPECTRUM file"),
    (LANCASHIRE, "xyinc2.jdx", "this is an EPR SPECTRUM file"),
]


def _text(path: Path) -> str:
    data = path.read_bytes()
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _headers(text: str) -> list[dict[str, str]]:
    """FIRSTX, LASTX, NPOINTS, XUNITS in force at each data record, read with a plain regex
    (independent of the reader under test)."""
    out, current = [], {}
    for line in re.split(r"\r\n|\r|\n", text):
        m = re.match(r"\s*##([^=]*)=(.*)", line)
        if not m:
            continue
        label = re.sub(r"[\s\-/_]", "", m.group(1)).upper()
        value = m.group(2).split("$$")[0].strip()
        if label == "TITLE":
            current = {}
        current[label] = value
        if label in ("XYDATA", "XYPOINTS"):
            out.append(dict(current))
    return out


def test_table_covers_every_file(refdata):
    """Each file of both published test sets has a decided outcome in FILES."""
    listed = {(folder, name) for folder, name, _ in FILES}
    on_disk = {
        (folder, p.name) for folder in (OFFICIAL, LANCASHIRE) for p in (refdata / folder).iterdir()
    }
    assert on_disk == listed


@pytest.mark.parametrize("folder, name, expected", FILES, ids=[f[1] for f in FILES])
def test_reference_file(refdata, folder, name, expected):
    """JCAMP-DX.org official test files and R. J. Lancashire's test set, via the jcamp 1.3.2
    sdist: infrared files decode to NPOINTS points with first and last x at FIRSTX and LASTX
    (within half a point spacing; the Y checks all pass, else a ReadError would be raised);
    other files are refused naming their data type."""
    path = refdata / folder / name
    if name == "DX-DIR.TXT":  # not JCAMP-DX: read_all hands it to another reader, which refuses
        with pytest.raises(ReadError):
            read_all(path)
        with pytest.raises(ReadError, match=re.escape(expected)):
            parse_jcamp(_text(path))
        return
    if isinstance(expected, str):
        with pytest.raises(ReadError, match=re.escape(expected)) as err:
            read_all(path)
        assert err.value.path == str(path)
        return
    objs = read_all(path)
    headers = [h for h in _headers(_text(path)) if "INFRARED" in h.get("DATATYPE", "").upper()]
    assert len(objs) == expected == len(headers)
    for spec, head in zip(objs, headers):
        assert isinstance(spec, Spectrum)
        n = int(head["NPOINTS"])
        first, last = float(head["FIRSTX"]), float(head["LASTX"])
        assert head["XUNITS"].upper() == "1/CM"  # all infrared files of the two sets
        assert spec.x.size == n
        half = abs(last - first) / (n - 1) / 2
        lo, hi = sorted((first, last))
        assert abs(spec.x[0] - lo) <= half and abs(spec.x[-1] - hi) <= half
        assert spec.meta.source_file == name and len(spec.meta.sha256 or "") == 64


def read1(refdata: Path, folder: str, name: str) -> Spectrum:
    (spec,) = read_all(refdata / folder / name)
    assert isinstance(spec, Spectrum)
    return spec


def test_jtpolys_affn_and_difdup_hold_the_same_integers(refdata):
    """R. J. Lancashire's test set, via the jcamp 1.3.2 sdist: jtpolys.jdx (AFFN) and
    jtpolysd.jdx (DIFDUP) are one polystyrene spectrum. The integers decode identically; the
    DIFDUP file's YFACTOR is written 2.3884185791e-09 against 2.384185791e-09 (a typing slip in
    the file: one extra 8), so the ordinates differ by exactly that ratio, 1.0017754."""
    path = refdata / LANCASHIRE
    (a,) = xydata_ordinates(_text(path / "jtpolys.jdx"))
    (d,) = xydata_ordinates(_text(path / "jtpolysd.jdx"))
    np.testing.assert_array_equal(np.rint(a / 2.384185791e-09), np.rint(d / 2.3884185791e-09))
    fa, fd = read1(refdata, LANCASHIRE, "jtpolys.jdx"), read1(refdata, LANCASHIRE, "jtpolysd.jdx")
    np.testing.assert_allclose(fd.x, fa.x, atol=1e-3)  # LASTX 4002.284 vs 4.00228378e+03
    np.testing.assert_allclose(fd.y, fa.y * (2.3884185791 / 2.384185791), rtol=1e-12)


def test_pe1800_pac_fraction_and_pacdec1_percent_agree(refdata):
    """JCAMP-DX.org PE1800.DX (YFACTOR 0.0001, fraction T) and Lancashire's pacdec1.jdx (the
    same PAC lines with YFACTOR 0.01, percent T): percent is detected from the data."""
    a = read1(refdata, OFFICIAL, "PE1800.DX")
    b = read1(refdata, LANCASHIRE, "pacdec1.jdx")
    np.testing.assert_array_equal(a.x, b.x)
    np.testing.assert_allclose(a.y, b.y, rtol=1e-12)


def test_indene_xy_pairs_against_absorbance_file(refdata):
    """Lancashire's xyinc1.jdx (indene, one X,Y pair a line, T to 1e-4) and fixinc2.jdx (the
    same grid as absorbance to 1e-4): A = -log10(T) within the 5e-5 rounding of A wherever T >
    0.001; where T <= 0.001 (T is even slightly negative there) fixinc2 holds the cap A = 3."""
    t = read1(refdata, LANCASHIRE, "xyinc1.jdx")
    a = read1(refdata, LANCASHIRE, "fixinc2.jdx")
    np.testing.assert_array_equal(t.x, a.x)
    ok = t.y > 1e-3
    assert ok.sum() > 3500
    assert np.max(np.abs(-np.log10(t.y[ok]) - a.y[ok])) <= 5.01e-5
    assert np.all(a.y[~ok] == 3.0)


def test_indene_difdup_against_xy_pairs(refdata):
    """Lancashire's dupinc2.jdx (indene, DIFDUP, percent T on a 0.964 cm-1 grid from 400.172)
    and xyinc1.jdx (said in its header to be derived from dupinc2.jdx, on a 1 cm-1 grid):
    linear interpolation of dupinc2 onto xyinc1's grid agrees to 2e-4 T on average and 0.006 T
    at worst (measured 1.8e-4 and 0.0056; the worst at the sharp 551 cm-1 band, where the
    regridding method matters)."""
    d = read1(refdata, LANCASHIRE, "dupinc2.jdx")
    t = read1(refdata, LANCASHIRE, "xyinc1.jdx")
    diff = np.abs(np.interp(t.x, d.x, d.y) - t.y)
    assert diff.mean() < 2e-4
    assert diff.max() < 0.006


def test_bruker_nmr_encodings_agree(refdata):
    """JCAMP-DX.org official test files (DX-DIR.TXT: one Bruker spectrum in DIFDUP, SQZ, PAC and
    AFFN form) and Lancashire's sqzdec1.jdx. BRUKAFFN, BRUKPAC, BRUKSQZ and TEST32 (ISAS, 32-bit)
    decode to identical ordinates. BRUKDIF holds the 16-bit TESTSPEC.DX ordinates times its
    YFACTOR 29670.15003, rounded: they agree within one unit. sqzdec1.jdx is BRUKSQZ.DX with
    one character changed on its first data line ("E242968" for "e242968"), so it differs in
    the sign of the second ordinate only."""
    off = refdata / OFFICIAL

    def one(path: Path) -> np.ndarray:
        (arr,) = xydata_ordinates(_text(path))
        assert arr.size == 16384
        return arr

    affn = one(off / "BRUKAFFN.DX")
    for name in ("BRUKPAC.DX", "BRUKSQZ.DX", "TEST32.DX"):
        np.testing.assert_array_equal(one(off / name), affn)
    assert np.max(np.abs(one(off / "BRUKDIF.DX") - one(off / "TESTSPEC.DX"))) < 1.0
    sqz, lanc = one(off / "BRUKSQZ.DX"), one(refdata / LANCASHIRE / "sqzdec1.jdx")
    assert np.flatnonzero(sqz != lanc).tolist() == [1]
    assert lanc[1] == -sqz[1]


def test_bruker_transmittance_and_absorbance_agree(refdata):
    """JCAMP-DX.org BRUKER1.JCM (percent T, YFACTOR 1.2207e-2 %, i.e. a T quantum of 1.22e-4)
    and BRUKER2.JCM (A, YFACTOR 2.4414e-4) are one spectrum: A = -log10(T) (Beer-Lambert).
    Rounding alone allows |dA| <= (qT/2)/(T ln 10) + qA/2; the files show up to 1.75 times
    that (the instrument rounded an intermediate too), so the test allows 3 times the T term
    plus a whole A quantum, for T > 1 % (A < 2). Below that BRUKER2 is clipped at A = 5.0 where
    T <= 0 (measured: |dA| <= 6.1e-4 for T > 0.1; 4.4e-3 at T = 0.0106)."""
    t = read1(refdata, OFFICIAL, "BRUKER1.JCM")
    a = read1(refdata, OFFICIAL, "BRUKER2.JCM")
    np.testing.assert_array_equal(t.x, a.x)
    q_t, q_a = 1.220703125e-4, 2.441406250e-4
    ok = t.y > 0.01
    assert ok.sum() > 3700
    tol = 3 * (q_t / 2) / (t.y[ok] * np.log(10)) + q_a
    assert np.all(np.abs(-np.log10(t.y[ok]) - a.y[ok]) <= tol)
    assert np.all(a.y[t.y <= 0] == 5.0)


def test_gas_phase_files_all_read(gas_phase):
    """Gas-phase infrared spectra, via the jcamp 1.3.2 sdist: every file reads as infrared
    (transmittance, absorbance or decadic absorption coefficients, read as absorbance), on a
    cm-1 axis inside 100..15000, with its gas state turned into the 'gas' token where stated."""
    files = sorted(gas_phase.glob("*.jdx"))
    assert len(files) >= 60
    for path in files:
        text = _text(path)
        objs = read_all(path)
        headers = _headers(text)
        assert len(objs) == len(headers), path.name
        for obj, head in zip(objs, headers):
            assert isinstance(obj, Spectrum), path.name
            assert obj.x.size == int(head["NPOINTS"]), path.name
            assert 100 < obj.x[0] < obj.x[-1] < 15000, path.name
            state = re.search(r"##STATE=\s*(GAS|VAPOR)", text, re.I)
            assert ("gas" in obj.meta.prep) == bool(state), path.name
            if "(base 10)" in head.get("YUNITS", ""):
                assert obj.y_kind == "absorbance"
                assert obj.meta.y_units == head["YUNITS"]


def test_near_infrared_xypoints_link_file(gas_phase):
    """example_compound_file.jdx (via the jcamp 1.3.2 sdist): a LINK file of two near-infrared
    blocks in ##XYPOINTS=(XY..XY) with YFACTOR 1e-6; its FIRSTY and MAXY labels give checks."""
    objs = read_all(gas_phase / "example_compound_file.jdx")
    assert len(objs) == 2
    first = objs[0]
    assert first.x[-1] == pytest.approx(11995.21) and first.x[0] == pytest.approx(3999.691)
    assert first.y[-1] == pytest.approx(0.032112)  # ##FIRSTY= 0.032112 (at 11995.21)
    assert first.y.max() == pytest.approx(0.529274)  # ##MAXY= 0.529274


# --------------------------------------------------------------------------------------------
# Robustness on real files: truncation and mutation give ReadError only
# --------------------------------------------------------------------------------------------

SEEDS = [(OFFICIAL, "BRUKER1.JCM"), (OFFICIAL, "SPECFILE.DX"), (LANCASHIRE, "compound.jdx")]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_mutated_reference_files_give_only_read_error(refdata, data):
    """Truncated and mutated copies of JCAMP-DX.org and Lancashire test files (via the jcamp
    1.3.2 sdist) are read or refused with ReadError, never another exception."""
    folder, name = data.draw(st.sampled_from(SEEDS))
    text = _text(refdata / folder / name)
    text = text[: data.draw(st.integers(0, len(text)))]
    for _ in range(data.draw(st.integers(0, 5))):
        if not text:
            break
        i = data.draw(st.integers(0, len(text) - 1))
        char = data.draw(st.sampled_from(list("#=$@AJjSZs%?+-. \n9(X)\x00é")))
        text = text[:i] + char + text[i + 1 :]
    try:
        objs = parse_jcamp(text)
    except ReflibError as exc:
        assert isinstance(exc, ReadError)
    else:
        assert all(isinstance(o, Spectrum | PeakList) for o in objs)
