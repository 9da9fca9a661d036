"""``starkiln catalogue`` never loses a file and never shows a traceback (issue 10).

References for the checks:
- Same file: POSIX ``stat`` (equal ``st_dev`` and ``st_ino`` name one file, whatever the
  links), through Python ``os.stat``; the inputs are compared byte for byte before and after.
- New folders: POSIX ``mkdir(2)``, a new folder's mode is 0777 less the umask.
- CSV text: read back with Python's ``csv`` module (the reference reader, RFC 4180: quotes
  only around fields holding a comma, a double quote or a line break); other formats with
  astropy (ECSV, FITS, VOTable) and pyarrow (Parquet), not with Starkiln's code.
- The byte-order mark U+FEFF that spreadsheet programs put before UTF-8 text: The Unicode
  Standard, section 23.8 (from memory); a reader drops it (common practice).
- Bad input: the project's rule (exit 2, one line starting ``starkiln: error:``, nothing
  written); every file under the test folder is compared before and after.
"""

from __future__ import annotations

import csv
import gzip
import hashlib
import io
import json
import os
import stat
from pathlib import Path

import numpy as np
import pytest

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")
pytest.importorskip("tqdm")

from starkiln.cli.main import main  # noqa: E402

MANIFEST = ".starkiln-parts.json"


# --- helpers ---------------------------------------------------------------------------------


def snapshot(root: Path) -> dict:
    """Every entry under ``root``: kind, mode, size, mtime and (files) SHA-256 of the bytes."""
    out = {}
    for dirpath, dirs, files in os.walk(root):
        for name in dirs + files:
            p = Path(dirpath) / name
            st = os.lstat(p)
            entry = [stat.S_IFMT(st.st_mode), stat.S_IMODE(st.st_mode), st.st_mtime_ns]
            if stat.S_ISLNK(st.st_mode):
                entry.append(os.readlink(p))
            elif stat.S_ISREG(st.st_mode):
                entry += [st.st_size, hashlib.sha256(p.read_bytes()).hexdigest()]
            out[str(p.relative_to(root))] = tuple(entry)
    return out


def run(capsys, *args):
    code = main(["catalogue", *map(str, args), "--no-progress"])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def assert_refused(code, err, *fragments):
    lines = err.strip().splitlines()
    assert code == 2, err
    assert len(lines) == 1 and lines[0].startswith("starkiln: error:"), err
    for f in fragments:
        assert f in lines[0], lines[0]


def write_csv_text(path: Path, text: str, encoding="utf-8") -> Path:
    path.write_bytes(text.encode(encoding))
    return path


def parquet_file(path: Path, rows=50, **extra) -> Path:
    cols = {"star_id": [f"EMB-{i:04d}" for i in range(rows)],
            "teff": np.linspace(3000.0, 9000.0, rows)}
    cols.update(extra)
    pq.write_table(pa.table(cols), path)
    return path


def fits_file(path: Path, rows=50, extra_hdu=False) -> Path:
    from astropy.io import fits

    cols = [fits.Column(name="star_id", format="8A",
                        array=np.array([f"EMB-{i:04d}" for i in range(rows)])),
            fits.Column(name="teff", format="D", array=np.linspace(3000.0, 9000.0, rows))]
    hdus = [fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]
    hdus[0].header["DOMENAME"] = "Emberfall dome (invented)"
    if extra_hdu:
        hdus.append(fits.ImageHDU(np.arange(12.0).reshape(3, 4), name="PLATE"))
    fits.HDUList(hdus).writeto(path)
    return path


VOT_HEAD = ('<?xml version="1.0"?>\n<VOTABLE version="1.4" '
            'xmlns="http://www.ivoa.net/xml/VOTable/v1.3">\n<RESOURCE><TABLE>\n')


def vot_text(fields, rows):
    size = {"char": ' arraysize="*"'}
    head = "".join(f'<FIELD name="{n}" datatype="{t}"{size.get(t, "")}/>\n' for n, t in fields)
    body = "".join("<TR>" + "".join(f"<TD>{v}</TD>" for v in r) + "</TR>\n" for r in rows)
    return VOT_HEAD + head + "<DATA><TABLEDATA>\n" + body + \
        "</TABLEDATA></DATA>\n</TABLE></RESOURCE>\n</VOTABLE>\n"


def ecsv_text(names_types, rows):
    head = "# %ECSV 1.0\n# ---\n# datatype:\n" + "".join(
        f"# - {{name: {n}, datatype: {t}}}\n" for n, t in names_types) + \
        "# schema: astropy-2.0\n"
    return head + " ".join(n for n, _ in names_types) + "\n" + "".join(
        " ".join(map(str, r)) + "\n" for r in rows)


def read_csv_cells(path: Path):
    """Rows of a CSV file with the reference reader (Python csv, RFC 4180)."""
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


# --- 1. the output is never one of the inputs ------------------------------------------------


def _link_cases():
    def same(d, src):
        return src

    def dotted(d, src):
        return d / "." / src.name

    def symlink(d, src):
        (d / "link").mkdir()
        os.symlink(src, d / "link" / ("out" + src.suffix))
        return d / "link" / ("out" + src.suffix)

    def hardlink(d, src):
        os.link(src, d / ("hard" + src.suffix))
        return d / ("hard" + src.suffix)

    def linked_folder(d, src):
        os.symlink(d, d / "alias")
        return d / "alias" / src.name

    return {"same-path": same, "dotted-path": dotted, "symbolic-link": symlink,
            "hard-link": hardlink, "through-linked-folder": linked_folder}


@pytest.mark.parametrize("force", [False, True])
@pytest.mark.parametrize("link", list(_link_cases()))
@pytest.mark.parametrize("fmt", ["csv", "fits"])
def test_output_equal_to_input_is_refused(tmp_path, capsys, fmt, link, force):
    if fmt == "csv":
        src = write_csv_text(tmp_path / "in.csv", "star_id,teff\n007,5772\n0042,3000\n")
    else:  # a FITS file with header keywords and an extra image extension
        src = fits_file(tmp_path / "in.fits", extra_hdu=True)
    out = _link_cases()[link](tmp_path, src)
    before = snapshot(tmp_path)
    code, _, err = run(capsys, src, out, "--temperature-column", "teff",
                       *(["--force"] if force else []))
    assert_refused(code, err)
    assert snapshot(tmp_path) == before
    if force:
        assert "is the input" in err


@pytest.mark.parametrize("case", ["out-holds-input", "out-is-input-folder", "out-is-input-file",
                                  "hard-link-in-out"])
def test_dask_output_holding_an_input_is_refused(tmp_path, capsys, case):
    out = tmp_path / "out"
    out.mkdir()
    if case == "out-holds-input":
        src = parquet_file(out / "part.00000.parquet")
    elif case == "out-is-input-folder":
        parquet_file(out / "a.parquet")
        src = out
    elif case == "out-is-input-file":
        src = parquet_file(tmp_path / "in.parquet")
        out = src
    else:
        src = parquet_file(tmp_path / "in.parquet")
        os.link(src, out / "copy.parquet")
    before = snapshot(tmp_path)
    code, _, err = run(capsys, src, out, "--engine", "dask", "--temperature-column", "teff",
                       "--force")
    assert_refused(code, err)
    assert snapshot(tmp_path) == before


# --- 2. --engine dask --force replaces only its own folders -------------------------------------


def _dask_run(src, out, force=False, **kw):
    from starkiln.engine.catalogue.dask_engine import colour_catalogue_dask
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.pipeline.settings import Settings

    pytest.importorskip("distributed")
    plan = CataloguePlan(Settings(), "temperature", "teff", **kw)
    return colour_catalogue_dask(src, out, plan, overwrite=force, n_workers=1, processes=False)


@pytest.mark.parametrize("umask", [0o022, 0o027, 0o077])
def test_dask_folder_follows_the_umask_and_carries_its_manifest(tmp_path, umask):
    src = parquet_file(tmp_path / "in.parquet")
    old = os.umask(umask)
    try:
        _dask_run(src, tmp_path / "out")
        mode = stat.S_IMODE(os.stat(tmp_path / "out").st_mode)
        _dask_run(src, tmp_path / "out", force=True, prefix="sk_")  # the replacement too
        mode_again = stat.S_IMODE(os.stat(tmp_path / "out").st_mode)
    finally:
        os.umask(old)
    assert mode == mode_again == 0o777 & ~umask  # POSIX mkdir(2)
    body = json.loads((tmp_path / "out" / MANIFEST).read_text())
    assert body["format"] == "starkiln-catalogue-parts" and body["version"] == 1
    assert sorted(os.listdir(tmp_path / "out")) == sorted(body["parts"] + [MANIFEST])
    assert len(body["settings_digest"]) == 32 and int(body["settings_digest"], 16) >= 0
    table = pq.read_table(tmp_path / "out" / body["parts"][0])
    assert "sk_r" in table.column_names  # the second run's parts, not the first's
    # Nothing is left beside the output.
    assert sorted(os.listdir(tmp_path)) == ["in.parquet", "out"]


def _unmarked_with_subfolder(out):
    (out / "notes.txt").write_text("dome schedule\n")
    (out / "sub").mkdir()
    (out / "sub" / "keep.parquet").write_bytes(b"precious")


def _marked_with_extra(out):
    (out / "my-notes.txt").write_text("keep me\n")


def _marked_with_subfolder(out):
    (out / "sub").mkdir()
    (out / "sub" / "keep.txt").write_text("keep me\n")


def _marked_manifest_broken(out):
    (out / MANIFEST).write_text("{not json")


def _empty_unmarked(out):
    pass


@pytest.mark.parametrize("prepare,fragment", [
    (_unmarked_with_subfolder, "no .starkiln-parts.json"),
    (_marked_with_extra, "'my-notes.txt'"),
    (_marked_with_subfolder, "'sub'"),
    (_marked_manifest_broken, "not a Starkiln manifest"),
    (_empty_unmarked, "no .starkiln-parts.json"),
])
def test_dask_force_refuses_folders_it_did_not_write(tmp_path, capsys, prepare, fragment):
    src = parquet_file(tmp_path / "in.parquet")
    out = tmp_path / "out"
    if prepare in (_unmarked_with_subfolder, _empty_unmarked):
        out.mkdir()
    else:
        _dask_run(src, out)
    prepare(out)
    before = snapshot(tmp_path)
    code, _, err = run(capsys, src, out, "--engine", "dask", "--temperature-column", "teff",
                       "--force", "--workers", "1")
    assert_refused(code, err, fragment)
    assert snapshot(tmp_path) == before


# --- 3. and 4. text exactly as read; one CSV writer ---------------------------------------------

#: Cells whose text a number parser would change; ids of an invented cluster.
TRICKY = ["007", "1e3", "0042", "+5", "1.50", "nan", "0x1F", "EMB 7", "x,y", 'say "hi"',
          "Ωmega-3", "", "-0", "1_000"]


def _tricky_csv(path: Path, bom=False, rows=None) -> Path:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["star_id", "label", "teff", "note"])
    for i, cell in enumerate(rows or TRICKY):
        w.writerow([cell, f"L{cell}", ["5772", "5772.50", "", "abc"][i % 4], cell])
    text = ("\ufeff" if bom else "") + buf.getvalue()
    path.write_bytes(text.encode("utf-8"))
    return path


def _local(src, out, stream_bytes, **kw):
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.catalogue.run import colour_catalogue
    from starkiln.engine.pipeline.settings import Settings

    plan = CataloguePlan(Settings(), "temperature", "teff", **kw)
    return colour_catalogue(src, out, plan, csv_stream_bytes=stream_bytes, chunk_rows=5)


@pytest.mark.parametrize("bom", [False, True])
@pytest.mark.parametrize("streamed", [False, True])
def test_csv_cells_are_written_back_exactly_as_read(tmp_path, streamed, bom):
    src = _tricky_csv(tmp_path / "in.csv", bom=bom)
    _local(src, tmp_path / "out.csv", 0 if streamed else 1 << 30)
    rows_in, rows_out = read_csv_cells(src), read_csv_cells(tmp_path / "out.csv")
    if bom:
        rows_in[0][0] = rows_in[0][0].removeprefix("\ufeff")
    assert rows_out[0] == rows_in[0] + ["r", "g", "b", "intensity", "status"]
    assert [r[:4] for r in rows_out] == rows_in  # every cell, as text, as read
    status = [r[-1] for r in rows_out[1:]]
    assert status == [["ok", "ok", "missing-temperature", "not-a-number"][i % 4]
                      for i in range(len(TRICKY))]
    # Quotes only where RFC 4180 needs them (no blanket quoting of every field).
    raw = (tmp_path / "out.csv").read_text(encoding="utf-8").splitlines()
    assert raw[0].startswith("star_id,label,teff,note,r,g,b,intensity,status")
    assert raw[1].startswith("007,L007,5772,007,")
    assert sum('"' in line for line in raw) == 2  # the rows holding x,y and say "hi"


@pytest.mark.parametrize("streamed", [False, True])
@pytest.mark.parametrize("fmt_out", ["csv", "parquet"])
def test_number_like_text_is_never_re_parsed(tmp_path, streamed, fmt_out):
    # Every cell of these columns looks like a number; none is one the plan reads.
    src = write_csv_text(tmp_path / "in.csv", "star_id,plate,teff\n007,1e3,5772\n"
                         "0042,2.50,3000\n0100,+7,9000\n")
    out = tmp_path / f"out.{fmt_out}"
    _local(src, out, 0 if streamed else 1 << 30)
    if fmt_out == "csv":
        rows = read_csv_cells(out)
        ids, plates = [r[0] for r in rows[1:]], [r[1] for r in rows[1:]]
    else:
        table = pq.read_table(out)
        ids, plates = table.column("star_id").to_pylist(), table.column("plate").to_pylist()
    assert ids == ["007", "0042", "0100"]
    assert plates == ["1e3", "2.50", "+7"]


def test_small_and_streamed_csv_output_are_byte_for_byte_equal(tmp_path):
    src = _tricky_csv(tmp_path / "in.csv", bom=True, rows=TRICKY * 40)
    _local(src, tmp_path / "small.csv", 1 << 30)
    _local(src, tmp_path / "streamed.csv", 0)
    small = (tmp_path / "small.csv").read_bytes()
    assert small == (tmp_path / "streamed.csv").read_bytes()
    assert not small.startswith(b"\xef\xbb\xbf")


@pytest.mark.parametrize("fmt_out", ["parquet", "ecsv", "fits", "vot"])
def test_csv_text_columns_reach_every_output_format_unchanged(tmp_path, fmt_out):
    from astropy.table import Table

    # FITS has no empty-string-versus-missing distinction and holds ASCII text only.
    cells = [c for c in TRICKY if c and (fmt_out != "fits" or c.isascii())]
    src = _tricky_csv(tmp_path / "in.csv", rows=cells)
    out = tmp_path / f"out.{fmt_out}"
    _local(src, out, 1 << 30)
    if fmt_out == "parquet":
        ids = pq.read_table(out).column("star_id").to_pylist()
    else:
        fmt = {"ecsv": "ascii.ecsv", "fits": "fits", "vot": "votable"}[fmt_out]
        ids = [v.decode() if isinstance(v, bytes) else str(v)
               for v in Table.read(str(out), format=fmt)["star_id"]]
    assert ids == cells


def _typed_inputs(tmp_path, fmt):
    """A text id column in each typed format (written with the reference writers)."""
    from astropy.table import Table

    ids = ["007", "1e3", "0042", "+5", "nan", "x,y"]
    teff = [5772.0, 3000.0, 9000.0, 4500.0, 6000.0, 7000.0]
    path = tmp_path / f"in.{fmt}"
    if fmt == "parquet":
        pq.write_table(pa.table({"star_id": ids, "teff": teff}), path)
    else:
        Table({"star_id": ids, "teff": teff}).write(
            str(path), format={"ecsv": "ascii.ecsv", "fits": "fits", "vot": "votable"}[fmt])
    return path, ids


@pytest.mark.parametrize("fmt", ["ecsv", "fits", "vot", "parquet"])
def test_text_columns_of_typed_formats_reach_csv_unchanged(tmp_path, fmt):
    src, ids = _typed_inputs(tmp_path, fmt)
    _local(src, tmp_path / "out.csv", 1 << 30)
    rows = read_csv_cells(tmp_path / "out.csv")
    assert [r[0] for r in rows[1:]] == ids


@pytest.mark.parametrize("streamed", [False, True])
@pytest.mark.parametrize("fmt_out", ["csv", "parquet"])
def test_repeated_and_empty_column_names_are_kept(tmp_path, streamed, fmt_out):
    src = write_csv_text(tmp_path / "in.csv", "id,x,x,,teff\n007,a,b,c,5772\n")
    out = tmp_path / f"out.{fmt_out}"
    _local(src, out, 0 if streamed else 1 << 30)
    names = read_csv_cells(out)[0] if fmt_out == "csv" else pq.read_schema(out).names
    assert names == ["id", "x", "x", "", "teff", "r", "g", "b", "intensity", "status"]


# --- 5. bad input: one line, exit 2, nothing changed -------------------------------------------


def _good_csv(d):
    return write_csv_text(d / "in.csv", "star_id,teff\nEMB-1,5772\nEMB-2,3000\n")


def _bytes(name, data):
    def make(d):
        (d / name).write_bytes(data)
        return [d / name, d / "out.csv"]
    return make


def _truncated(maker, name, keep):
    def make(d):
        full = maker(d / ("full-" + name))
        data = full.read_bytes()
        (d / name).write_bytes(data[:keep(len(data))])
        return [d / name, d / "out.csv"]
    return make


def _out_is_folder(force):
    def make(d):
        src = _good_csv(d)
        (d / "out.csv").mkdir()
        (d / "out.csv" / "inside.txt").write_text("keep\n")
        return [src, d / "out.csv", *(["--force"] if force else [])]
    return make


def _csv_then(text, out="out.csv", encoding="utf-8", extra=()):
    def make(d):
        return [write_csv_text(d / "in.csv", text, encoding), d / out, *extra]
    return make


def _parquet_with(**cols):
    def make(d):
        pq.write_table(pa.table(cols), d / "in.parquet")
        return [d / "in.parquet", d / "out.csv"]
    return make


def _late_bad_utf8(d):
    body = "".join(f"EMB-{i:05d},5000\n" for i in range(9000))  # beyond the header probe
    (d / "in.csv").write_bytes(("star_id,teff\n" + body).encode() + b"\xe9toile,5000\n")
    return [d / "in.csv", d / "out.csv"]


def _folder_with_bad_part(d):
    (d / "parts").mkdir()
    parquet_file(d / "parts" / "part-1.parquet")
    (d / "parts" / "part-2.parquet").write_bytes(parquet_file(d / "x.parquet").read_bytes()[:90])
    return [d / "parts", d / "out.parquet"]


def _folder_mixed_columns(d):
    (d / "parts").mkdir()
    parquet_file(d / "parts" / "part-1.parquet")
    parquet_file(d / "parts" / "part-2.parquet", vmag=np.ones(50))
    return [d / "parts", d / "out.parquet"]


def _empty_folder(d):
    (d / "parts").mkdir()
    return [d / "parts", d / "out.parquet"]


def _fits_image_only(d):
    from astropy.io import fits

    fits.PrimaryHDU(np.zeros((4, 4))).writeto(d / "in.fits")
    return [d / "in.fits", d / "out.csv"]


def _link_out(kind, fmt="csv", extra=("--force",)):
    def make(d):
        src = _good_csv(d) if fmt == "csv" else fits_file(d / "in.fits", extra_hdu=True)
        return [src, _link_cases()[kind](d, src), *extra]
    return make


def _dangling(d):
    os.symlink(d / "gone.csv", d / "in.csv")
    return [d / "in.csv", d / "out.csv"]


def _folder_named_csv(d):
    (d / "in.csv").mkdir()
    return [d / "in.csv", d / "out.csv"]


def _through_file(d):
    src = _good_csv(d)
    return [src / "x.csv", d / "out.csv"]


def _fifo(d):
    os.mkfifo(d / "in.csv")
    return [d / "in.csv", d / "out.csv"]


def _out_parent_is_file(d):
    src = _good_csv(d)
    return [src, src / "out.csv"]


def _dask(prepare, force=True):
    def make(d):
        src = parquet_file(d / "in.parquet")
        out = d / "out"
        out.mkdir()
        prepare(d, out)
        return [src, out, "--engine", "dask", *(["--force"] if force else [])]
    return make


def _unrelated(d, out):
    (out / "holiday.jpg").write_bytes(b"\xff\xd8 invented")
    (out / "deep").mkdir()
    (out / "deep" / "notes.txt").write_text("keep\n")


def _fake_mark(d, out):
    (out / MANIFEST).write_text(json.dumps({"format": "starkiln-catalogue-parts", "version": 1,
                                            "parts": ["part.00000.parquet"],
                                            "settings_digest": "0" * 32}))
    parquet_file(out / "part.00000.parquet")
    (out / "extra.txt").write_text("keep\n")


def _mark_lists_path(d, out):
    (out / MANIFEST).write_text(json.dumps({"format": "starkiln-catalogue-parts", "version": 1,
                                            "parts": ["../in.parquet"],
                                            "settings_digest": "0" * 32}))


def _mark_is_a_folder(d, out):
    (out / MANIFEST).mkdir()


def _linked_mark(d, out):
    _fake_mark(d, out)
    os.unlink(out / "extra.txt")
    os.rename(out, d / "real")
    os.symlink(d / "real", out)


def _dask_in_inside(d):
    (d / "out").mkdir()
    parquet_file(d / "out" / "in.parquet")
    return [d / "out" / "in.parquet", d / "out", "--engine", "dask", "--force"]


def _fits_dup_text():
    # Two TTYPE cards with the same name, as some tools write (astropy cannot make one).
    from astropy.io import fits

    def make(d):
        cols = [fits.Column(name="a", format="D", array=np.ones(3)),
                fits.Column(name="b", format="D", array=np.ones(3)),
                fits.Column(name="teff", format="D", array=np.full(3, 5000.0))]
        hdul = fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)])
        buf = io.BytesIO()
        hdul.writeto(buf)
        data = buf.getvalue().replace(b"TTYPE2  = 'b       '", b"TTYPE2  = 'a       '")
        (d / "in.fits").write_bytes(data)
        return [d / "in.fits", d / "out.csv"]
    return make


def _png(d):
    (d / "in.csv").write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4)
    return [d / "in.csv", d / "out.csv"]


def _random_bytes(d):
    (d / "in.csv").write_bytes(np.random.default_rng(7).integers(0, 256, 4096, dtype=np.uint8)
                               .tobytes())
    return [d / "in.csv", d / "out.csv"]


def _gzip_csv(d):
    (d / "in.csv").write_bytes(gzip.compress(b"star_id,teff\nEMB-1,5000\n" * 50))
    return [d / "in.csv", d / "out.csv"]


VOT_GOOD = vot_text([("star_id", "char"), ("teff", "double")], [("EMB-1", 5000), ("EMB-2", 6000)])
ECSV_GOOD = ecsv_text([("star_id", "string"), ("teff", "float64")], [("EMB-1", 5000)])


BAD_INPUTS = {
    # CSV text
    "csv-latin1-cell": _csv_then("star_id,teff\nÉtoile,5000\n", encoding="latin-1"),
    "csv-latin1-header": _csv_then("star_id,tëff,teff\nA,1,5000\n", encoding="latin-1"),
    "csv-utf16": _csv_then("star_id,teff\nEMB-1,5000\n", encoding="utf-16"),
    "csv-not-utf8-late": _late_bad_utf8,
    "csv-random-bytes": _random_bytes,
    "csv-gzip-named-csv": _gzip_csv,
    "csv-png-named-csv": _png,
    "csv-empty-file": _bytes("in.csv", b""),
    "csv-only-bom": _bytes("in.csv", b"\xef\xbb\xbf"),
    "csv-row-too-long": _csv_then("star_id,teff\nEMB-1,5000\nEMB-2,5000,9,9\n"),
    "csv-row-too-short": _csv_then("star_id,teff,vmag\nEMB-1,5000,3\nEMB-2\n"),
    "csv-unclosed-quote": _csv_then('star_id,teff\n"EMB-1,5000\nEMB-2,6000\n'),
    "csv-no-such-column": _csv_then("star_id,t_eff\nEMB-1,5000\n"),
    "csv-plan-column-twice": _csv_then("teff,teff\n5000,6000\n"),
    "csv-repeated-names-into-fits": _csv_then("x,x,teff\n1,2,5000\n", "out.fits"),
    "csv-empty-name-into-vot": _csv_then("id,,teff\n1,2,5000\n", "out.vot"),
    "csv-repeated-names-into-ecsv": _csv_then("x,x,teff\n1,2,5000\n", "out.ecsv"),
    "csv-non-ascii-into-fits": _csv_then("star_id,teff\nΩmega-3,5000\n", "out.fits"),
    "csv-nul-bytes": _bytes("in.csv", b"star_id,teff\n\x00\x00\xff\xfe,5000\n"),
    # Parquet
    "parquet-empty-file": _bytes("in.parquet", b""),
    "parquet-magic-only": _bytes("in.parquet", b"PAR1"),
    "parquet-first-10-bytes": _truncated(parquet_file, "in.parquet", lambda n: 10),
    "parquet-half": _truncated(parquet_file, "in.parquet", lambda n: n // 2),
    "parquet-no-footer": _truncated(parquet_file, "in.parquet", lambda n: n - 8),
    "parquet-plan-column-list": _parquet_with(star_id=["a"], teff=[[5000.0, 1.0]]),
    "parquet-plan-column-struct": _parquet_with(teff=[{"k": 5000.0}]),
    "parquet-plan-column-bool": _parquet_with(teff=[True, False]),
    "parquet-folder-bad-part": _folder_with_bad_part,
    "parquet-folder-mixed-columns": _folder_mixed_columns,
    "parquet-folder-empty": _empty_folder,
    "parquet-glob-no-match": lambda d: [d / "nothing-*.parquet", d / "out.csv"],
    # FITS
    "fits-empty-file": _bytes("in.fits", b""),
    "fits-nonsense-card": _bytes("in.fits", b"SIMPLE  = nonsense"),
    "fits-first-100-bytes": _truncated(fits_file, "in.fits", lambda n: 100),
    "fits-half": _truncated(fits_file, "in.fits", lambda n: n // 2),
    "fits-last-block-cut": _truncated(fits_file, "in.fits", lambda n: n - 1500),
    "fits-image-only": _fits_image_only,
    "fits-repeated-names": _fits_dup_text(),
    # VOTable
    "vot-half": _bytes("in.vot", VOT_GOOD[: len(VOT_GOOD) // 2].encode()),
    "vot-binary": _bytes("in.vot", bytes(range(256))),
    "vot-html": _bytes("in.xml", b"<html><body>dome schedule</body></html>"),
    "vot-no-table": _bytes("in.vot", (VOT_HEAD.replace("<TABLE>\n", "") +
                                      "</RESOURCE>\n</VOTABLE>\n").encode()),
    "vot-repeated-fields": _bytes("in.vot", vot_text([("a", "double"), ("a", "double"),
                                                      ("teff", "double")],
                                                     [(1, 2, 5000)]).encode()),
    # ECSV
    "ecsv-broken-yaml": _bytes("in.ecsv", b"# %ECSV 1.0\n# ---\n# datatype: [ {name\nteff\n5\n"),
    "ecsv-header-cut": _bytes("in.ecsv", ECSV_GOOD[:40].encode()),
    "ecsv-repeated-names": _bytes("in.ecsv", ecsv_text([("a", "float64"), ("a", "float64"),
                                                        ("teff", "float64")],
                                                       [(1, 2, 5000)]).encode()),
    "ecsv-not-utf8": _bytes("in.ecsv", ECSV_GOOD.replace("EMB-1", "\xc9MB").encode("latin-1")),
    # the input path
    "input-missing": lambda d: [d / "none.csv", d / "out.csv"],
    "input-dangling-link": _dangling,
    "input-is-a-folder-named-csv": _folder_named_csv,
    "input-under-a-file": _through_file,
    "input-is-a-fifo": _fifo,
    "input-unknown-extension": _bytes("in.txt", b"teff\n5000\n"),
    # the output path
    "output-is-a-folder": _out_is_folder(False),
    "output-is-a-folder-force": _out_is_folder(True),
    "output-folder-missing": lambda d: [_good_csv(d), d / "missing" / "out.csv"],
    "output-under-a-file": _out_parent_is_file,
    "output-unknown-extension": lambda d: [_good_csv(d), d / "out.xlsx"],
    "output-is-input": _link_out("same-path"),
    "output-symlink-to-input": _link_out("symbolic-link"),
    "output-hard-link-to-input": _link_out("hard-link"),
    "output-is-input-fits-dotted": _link_out("dotted-path", "fits"),
    # --engine dask output folders
    "dask-unrelated-folder": _dask(_unrelated),
    "dask-unrelated-folder-no-force": _dask(_unrelated, force=False),
    "dask-forged-mark-extra-file": _dask(_fake_mark),
    "dask-mark-lists-a-path": _dask(_mark_lists_path),
    "dask-mark-is-a-folder": _dask(_mark_is_a_folder),
    "dask-input-inside-output": _dask_in_inside,
    "dask-output-is-a-link-to-a-marked-folder": _dask(_linked_mark),
}


@pytest.mark.parametrize("case", list(BAD_INPUTS))
def test_bad_catalogue_input_is_one_line_and_changes_nothing(tmp_path, capsys, case):
    args = BAD_INPUTS[case](tmp_path)
    before = snapshot(tmp_path)
    code, out, err = run(capsys, *args, "--temperature-column", "teff")
    assert "Traceback" not in err
    assert_refused(code, err)
    assert snapshot(tmp_path) == before, case


def test_there_are_at_least_40_bad_inputs():
    assert len(BAD_INPUTS) >= 40


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads files whatever their mode")
def test_unreadable_input(tmp_path, capsys):
    src = _good_csv(tmp_path)
    src.chmod(0)
    try:
        code, _, err = run(capsys, src, tmp_path / "out.csv", "--temperature-column", "teff")
    finally:
        src.chmod(0o644)
    assert_refused(code, err, "not readable")
    assert not (tmp_path / "out.csv").exists()
