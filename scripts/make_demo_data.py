"""Write the INVENTED demo scenario into demo_data/ (deterministic: same files on every run).

    python scripts/make_demo_data.py            # rewrites demo_data/ in the repository
    python scripts/make_demo_data.py --out DIR  # somewhere else

The scenario is our own invention: a short route from 4'-bromoacetophenone to a protected
4-ethynylphenyl carbinol (Sonogashira coupling with ethynyltrimethylsilane, desilylation, ketone
reduction, silyl protection, and a semi-hydrogenation side branch), with its reagents and
solvents. Every spectrum is simulated from group-frequency rules written from memory by
scripts/simlib.py; none is a measurement. Structures are real simple compounds; their spectra
here are not their real spectra.
"""

from __future__ import annotations

import argparse
import csv
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

import simlib  # noqa: E402

from reflib.io.delimited import write_delimited  # noqa: E402
from reflib.io.jcamp import write_jcamp  # noqa: E402
from reflib.signal.peaks import pick_peaks  # noqa: E402
from reflib.spectrum import Metadata, PeakList, Spectrum  # noqa: E402

SEED = 20240611
ORIGIN = "reflib demo - INVENTED spectrum simulated from group-frequency rules, not a measurement"
ROOT = Path(__file__).resolve().parent.parent


@dataclass
class DemoCompound:
    """One compound of the invented route and how its reference spectrum is stored."""

    slug: str
    name: str
    smiles: str
    role: str
    groups: list[str]
    n_ch3: int
    n_ch2: int
    ring: str | None
    prep: list[str]
    fmt: str  # affn | difdup | csv | txt
    notebook: str
    operator: str
    note: str

    def peaks(self) -> PeakList:
        pl, _labels = simlib.build_peaks(
            f"demo/{self.slug}",
            self.groups,
            family_key=f"demo/family/{'+'.join(sorted(self.groups))}",
            skeleton_key=f"demo/ring/{self.ring}",
            chain_key=f"demo/chain/{self.slug}",
            ring=self.ring,
            n_ch3=self.n_ch3,
            n_ch2=self.n_ch2,
            longest_run=self.n_ch2,
            n_fingerprint=(4, 3, 3, 3) if self.ring else (2, 3, 3, 3),
            seed=SEED,
        )
        return pl


C = DemoCompound
COMPOUNDS = [
    C("bromoacetophenone", "1-(4-bromophenyl)ethan-1-one", "CC(=O)c1ccc(Br)cc1",
      "starting material", ["ketone_aryl", "bromide_aryl"], 1, 0, "para", ["kbr"], "affn",
      "AO-214-01", "A. Okafor", "bought, checked against the certificate"),
    C("tms-acetylene", "ethynyltrimethylsilane", "C#C[Si](C)(C)C", "reagent",
      ["alkyne_terminal", "trimethylsilyl"], 3, 0, None, ["film"], "csv",
      "AO-214-01", "A. Okafor", "reagent bottle, new lot"),
    C("tbscl", "tert-butylchlorodimethylsilane", "CC(C)(C)[Si](C)(C)Cl", "reagent",
      ["silyl_chloride_tbs"], 5, 0, None, ["nujol"], "difdup",
      "AO-214-07", "A. Okafor", "low-melting solid, run as a mull"),
    C("triethylamine", "triethylamine", "CCN(CC)CC", "reagent", ["amine_tertiary"], 3, 3, None,
      ["film"], "txt", "AO-214-01", "M. Lindqvist", "base and co-solvent of the coupling"),
    C("ethyl-acetate", "ethyl acetate", "CCOC(C)=O", "solvent", ["acetate"], 2, 1, None,
      ["film"], "csv", "ML-088-02", "M. Lindqvist", "work-up solvent"),
    C("thf", "tetrahydrofuran", "C1CCOC1", "solvent", ["ether_cyclic"], 0, 4, None, ["film"],
      "difdup", "ML-088-02", "M. Lindqvist", "reaction solvent"),
    C("tms-alkyne-ketone", "1-{4-[2-(trimethylsilyl)ethynyl]phenyl}ethan-1-one",
      "CC(=O)c1ccc(C#C[Si](C)(C)C)cc1", "intermediate", ["ketone_aryl", "alkyne_tms"], 4, 0,
      "para", ["atr"], "affn", "AO-214-02", "A. Okafor", "Sonogashira product, fractions 8-15"),
    C("ethynyl-ketone", "1-(4-ethynylphenyl)ethan-1-one", "CC(=O)c1ccc(C#C)cc1",
      "intermediate", ["ketone_aryl", "alkyne_terminal"], 1, 0, "para", ["kbr"], "difdup",
      "AO-214-03", "A. Okafor", "after K2CO3/MeOH desilylation, recrystallised"),
    C("ethynyl-carbinol", "1-(4-ethynylphenyl)ethan-1-ol", "CC(O)c1ccc(C#C)cc1", "product",
      ["alcohol_secondary", "alkyne_terminal"], 1, 0, "para", ["film"], "affn",
      "AO-214-04", "A. Okafor", "NaBH4 reduction, pure by TLC"),
    C("tbs-ether", "tert-butyl[1-(4-ethynylphenyl)ethoxy]dimethylsilane",
      "CC(O[Si](C)(C)C(C)(C)C)c1ccc(C#C)cc1", "product", ["silyl_ether_tbs", "alkyne_terminal"],
      6, 0, "para", ["film"], "csv", "AO-214-07", "A. Okafor", "TBS protection, final product"),
    C("vinyl-carbinol", "1-(4-ethenylphenyl)ethan-1-ol", "C=Cc1ccc(C(C)O)cc1", "product",
      ["alcohol_secondary", "alkene_vinyl_aryl"], 1, 0, "para", ["atr"], "difdup",
      "ML-091-05", "M. Lindqvist", "Lindlar semi-hydrogenation of the alkyne (side route)"),
    C("bromo-carbinol", "1-(4-bromophenyl)ethan-1-ol", "CC(O)c1ccc(Br)cc1", "intermediate",
      ["alcohol_secondary", "bromide_aryl"], 1, 0, "para", ["film"], "txt",
      "ML-091-01", "M. Lindqvist", "reduction of the starting material, for the alternative order"),
]  # fmt: skip

#: Compounds that are NOT in the library, for the "no-match" crude (the first is used).
NOT_IN_LIBRARY = [
    C("acetanilide", "N-(4-bromophenyl)acetamide", "CC(=O)Nc1ccc(Br)cc1", "other",
      ["amide_secondary", "bromide_aryl"], 1, 0, "para", ["kbr"], "affn", "", "", ""),
    C("diyne", "1,1'-[buta-1,3-diyne-1,4-diylbis(4,1-phenylene)]di(ethan-1-one)",
      "CC(=O)c1ccc(C#CC#Cc2ccc(C(C)=O)cc2)cc1", "other",
      ["ketone_aryl", "alkyne_diyne_symmetric"], 2, 0, "para", ["kbr"], "affn", "", "", ""),
]  # fmt: skip
BY_SLUG = {c.slug: c for c in COMPOUNDS + NOT_IN_LIBRARY}


def _rng(*keys: object) -> np.random.Generator:
    return simlib.rng_for(SEED, *keys)


def measure(
    c: DemoCompound,
    prep: list[str],
    tag: str,
    *,
    parts=None,
    subtracted: bool = False,
    truncate: bool = True,
) -> Spectrum:
    """A simulated spectrum of ``c`` (or of a mixture ``parts``) in preparation ``prep``."""
    rng = _rng("measure", c.slug, tag)
    if parts is None:
        pl = simlib.condense(simlib.perturb(c.peaks(), rng), prep, rng)
        spec = simlib.render(pl, rng=rng, noise=0.0015, baseline=0.01)
    else:
        mix = [
            (simlib.condense(simlib.perturb(p.peaks(), rng), prep, rng), share)
            for p, share in parts
        ]
        spec = simlib.render_mixture(mix, rng=rng, noise=0.0015, baseline=0.01, top=0.8)
    spec = simlib.apply_prep(
        spec, prep, rng, truncate_windows=truncate, subtract_solvent=subtracted
    )
    y = np.round(spec.y, 5)  # 5 decimals of absorbance are far below the noise; keeps files small
    return Spectrum(spec.x, y, "absorbance", spec.meta)


def _meta(title: str, prep: list[str], operator: str, state: str) -> Metadata:
    return Metadata(
        title=title, origin=ORIGIN, owner=operator or "reflib demo", resolution=4.0,
        state=state, prep=list(prep),
    )  # fmt: skip


STATE = {"kbr": "solid (KBr pellet)", "nujol": "solid (mineral-oil mull)", "atr": "neat (ATR)",
         "film": "liquid film", "chcl3": "solution in chloroform"}  # fmt: skip


def _peak_text(spec: Spectrum, prep: list[str], title: str) -> str:
    """A peak list as a chemist would type it from this spectrum: the clear bands, rounded."""
    pl = pick_peaks(spec)
    keep = pl.intensities >= 0.05
    idx = np.flatnonzero(keep)
    idx = idx[np.argsort(-pl.intensities[idx])][:22]
    idx = np.sort(idx)
    sub = PeakList(
        np.round(pl.positions[idx]), pl.intensities[idx], widths=pl.widths[idx],
        broad=pl.broad[idx],
    )  # fmt: skip
    label = {"film": "film", "kbr": "KBr", "atr": "ATR", "nujol": "nujol"}.get(prep[0], prep[0])
    return (
        f"# {title}\n# INVENTED demo data (simulated, not a measurement)\n"
        f"IR ({label}): {sub.to_text()}\n"
    )


def write(spec: Spectrum, fmt: str, path: Path, title: str) -> None:
    if fmt in ("affn", "difdup"):
        text = write_jcamp(spec, compression=fmt)
    elif fmt == "csv":
        text = f"# {title}: INVENTED demo data (simulated, not a measurement)\n" + write_delimited(
            spec
        )
    elif fmt == "txt":
        text = _peak_text(spec, spec.meta.prep, title)
    else:
        raise ValueError(fmt)
    path.write_text(text, encoding="utf-8", newline="\n")


EXT = {"affn": ".jdx", "difdup": ".jdx", "csv": ".csv", "txt": ".txt"}

#: The "new crude" spectra: (file stem, description, slug or mixture, prep, format, transmittance)
CRUDES = [
    ("AO-214-03-crude-nujol", "crude desilylation product, run as a nujol mull",
     [("ethynyl-ketone", 1.0)], ["nujol"], "affn", True,
     "should be identified as 1-(4-ethynylphenyl)ethan-1-one (the mull oil regions are masked)"),
    ("AO-214-04-crude-film", "crude NaBH4 reduction product, thin film",
     [("ethynyl-carbinol", 0.92), ("ethynyl-ketone", 0.08)], ["film"], "difdup", False,
     "the carbinol with 8 % of the signal from unreduced ketone (C=O near 1685 cm-1)"),
    ("XX-001-unknown-kbr", "a crude from the neighbouring bench, KBr pellet",
     [("NOT_IN_LIBRARY", 1.0)], ["kbr"], "affn", False,
     "a compound that is not in the library: the search should answer no-match"),
    ("AO-214-07-crude-chcl3", "crude TBS protection product in chloroform, solvent subtracted",
     [("tbs-ether", 1.0)], ["chcl3", "nacl"], "csv", False,
     "should be identified as the TBS ether; chloroform's opaque regions are masked"),
]  # fmt: skip


def build(out: Path, not_in_library: str = "acetanilide") -> list[Path]:
    """Write every demo file under ``out``; returns the paths written."""
    if out.exists():
        for sub in ("references", "crudes"):
            shutil.rmtree(out / sub, ignore_errors=True)
    (out / "references").mkdir(parents=True, exist_ok=True)
    (out / "crudes").mkdir(parents=True, exist_ok=True)
    written = []
    rows = []
    for c in COMPOUNDS:
        spec = measure(c, c.prep, "reference")
        spec.meta = _meta(c.name, c.prep, c.operator, STATE.get(c.prep[0], ""))
        rel = Path("references") / f"{c.slug}-{c.prep[0]}{EXT[c.fmt]}"
        write(spec, c.fmt, out / rel, c.name)
        written.append(out / rel)
        rows.append([rel.as_posix(), c.name, ",".join(c.prep), c.smiles, c.role, c.notebook,
                     c.operator, c.note])  # fmt: skip
    # a second preparation of the product, in chloroform: the library keeps both
    c = BY_SLUG["ethynyl-carbinol"]
    spec = measure(c, ["chcl3", "nacl"], "reference-chcl3")
    spec.meta = _meta(c.name, ["chcl3", "nacl"], c.operator, STATE["chcl3"])
    rel = Path("references") / f"{c.slug}-chcl3.jdx"
    write(spec, "difdup", out / rel, c.name)
    written.append(out / rel)
    rows.append([rel.as_posix(), c.name, "chcl3,nacl", c.smiles, c.role, c.notebook, c.operator,
                 "second preparation, 5 % w/v in a 0.1 mm NaCl cell"])  # fmt: skip
    with (out / "manifest.csv").open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["file", "name", "prep", "smiles", "role", "notebook", "operator", "note"])
        w.writerows(rows)
    written.append(out / "manifest.csv")
    expected = []
    for stem, title, parts, prep, fmt, as_t, _why in CRUDES:
        comps = [
            (BY_SLUG[not_in_library if slug == "NOT_IN_LIBRARY" else slug], share)
            for slug, share in parts
        ]
        sub = "chcl3" in prep  # the chemist subtracted a chloroform spectrum
        if len(comps) == 1:
            spec = measure(comps[0][0], prep, f"crude/{stem}", subtracted=sub)
        else:
            spec = measure(comps[0][0], prep, f"crude/{stem}", parts=comps, subtracted=sub)
        spec.meta = _meta(title, prep, "", STATE.get(prep[0], ""))
        if as_t:
            spec = spec.to_transmittance()
            spec = Spectrum(spec.x, np.round(spec.y, 5), "transmittance", spec.meta)
        path = out / "crudes" / f"{stem}{EXT[fmt]}"
        write(spec, fmt, path, title)
        written.append(path)
        left = [(BY_SLUG[slug].name, share) for slug, share in parts[1:]]
        answer = "no-match" if parts[0][0] == "NOT_IN_LIBRARY" else BY_SLUG[parts[0][0]].name
        expected.append([path.name, ",".join(prep), title, answer,
                         left[0][0] if left else "", f"{left[0][1]:.2f}" if left else "0",
                         _why])  # fmt: skip
    with (out / "crudes" / "expected.csv").open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["file", "prep", "description", "expected", "leftover", "leftover_share",
                    "note"])  # fmt: skip
        w.writerows(expected)
    written.append(out / "crudes" / "expected.csv")
    (out / "README.md").write_text(README, encoding="utf-8", newline="\n")
    written.append(out / "README.md")
    return written


#: The demo folder's README, kept beside this script so that it is edited as Markdown.
README = (Path(__file__).resolve().parent / "demo_data_README.md").read_text(encoding="utf-8")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=ROOT / "demo_data")
    ap.add_argument("--unknown", default="acetanilide", choices=[c.slug for c in NOT_IN_LIBRARY])
    args = ap.parse_args(argv)
    paths = build(args.out, args.unknown)
    total = sum(p.stat().st_size for p in paths)
    print(f"wrote {len(paths)} files, {total / 1024:.0f} KB, under {args.out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
