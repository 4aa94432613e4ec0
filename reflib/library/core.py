"""The public face of a reference library: add, search, list, show, remove.

A :class:`Library` wraps one SQLite file (see :mod:`reflib.library.store`). Every CLI command is a
call
of this API::

    from reflib import Library, read_spectrum
    lib = Library.create("group.sqlite")
    lib.add(read_spectrum("benzil-kbr.jdx"), name="benzil", role="intermediate", prep=["kbr"])
    result = lib.search(read_spectrum("crude-17.jdx"), prep=["nujol"], top=5)
    print(result.verdict, result.hits[0].name)

A library match is evidence, not proof of identity.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path
from typing import Any

import numpy as np

from reflib.analysis.calibration import (
    MIN_COMPOUNDS,
    NEIGHBOURS_SEEN,
    band_offsets,
    candidates_alike,
    crowding_seen,
    in_one_frame,
    mask_share,
    top_distinct,
)
from reflib.analysis.encode import DEFAULT_ENCODING, Encoding, comparable_peaks, encode
from reflib.analysis.phase import gas_against_condensed, strict_verdict
from reflib.analysis.search import (
    DEFAULT_RULE,
    PRINTED_HITS,
    Hit,
    SearchResult,
    VerdictRule,
    atr_side,
    comparison_weights,
    distinguishing_bands,
    explain,
)
from reflib.chem import prep as prep_mod
from reflib.errors import ValidationError
from reflib.library.calibrate import compound_count, load_model, stale
from reflib.library.crossphase import explain_args
from reflib.library.entries import (
    AddResult,
    clean_name,
    consistency_warnings,
    data_range,
    quality_report,
    quality_warnings,
    structure_ids,
    to_peaks,
)
from reflib.library.filters import Where, matching_compounds, restricted_search, tags_of
from reflib.library.history import history_of, record, record_add
from reflib.library.index import range_key
from reflib.library.store import Store, normalise_role, peaks_from_rows
from reflib.spectrum import PeakList, Spectrum

#: Queries scored together in one matrix product by :meth:`Library.search_many`.
QUERY_CHUNK = 64

#: An ambiguous calibrated verdict lists the bands telling the top two apart when their scores
#: differ by less than this (common practice, no source).
DISTINGUISH_MARGIN = 0.1

#: A new spectrum whose best match is another compound at this verdict triggers a warning.
SIMILAR_WARNING_VERDICT = "confident"


class Library:
    """One reference library file.

    Use :meth:`create` for a new file and :meth:`open` for an existing one; both accept
    ``":memory:"`` for create (handy in scripts and benchmarks). A Library is a context manager.
    """

    def __init__(self, store: Store, rule: VerdictRule = DEFAULT_RULE):
        self.store = store
        self.rule = rule
        self._index = None

    # --- life cycle ---------------------------------------------------------------------------

    @classmethod
    def create(cls, path: str | Path, *, encoding: Encoding = DEFAULT_ENCODING) -> Library:
        """Create a new, empty library at ``path`` (refuses to overwrite a file)."""
        return cls(Store.create(path, encoding))

    @classmethod
    def open(cls, path: str | Path) -> Library:
        """Open an existing library; a clear error when it is missing or too new."""
        return cls(Store.open(path))

    def close(self) -> None:
        self.store.close()

    def __enter__(self) -> Library:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def path(self) -> str:
        return self.store.path

    @property
    def encoding(self) -> Encoding:
        return self.store.encoding

    @property
    def revision(self) -> int:
        return self.store.revision

    # --- adding -------------------------------------------------------------------------------

    def add(
        self,
        data: Spectrum | PeakList,
        *,
        name: str,
        smiles: str | None = None,
        role: str | None = None,
        prep: str | Iterable[str] | None = None,
        notebook: str | None = None,
        operator: str | None = None,
        note: str | None = None,
        aliases: Iterable[str] = (),
        force: bool = False,
        strict: bool = False,
        check_similar: bool = True,
        peaks: PeakList | None = None,
    ) -> AddResult:
        """Add one spectrum (or typed peak list) of a confirmed compound.

        A new name creates the compound; a known name adds another spectrum to it (a second
        preparation, say). An exact duplicate file (same SHA-256) is refused unless ``force``.
        The returned warnings name any *other* compound the new spectrum matches confidently
        (the same compound under another name, a mislabel, or an impure sample).
        ``peaks`` passes bands already picked from ``data`` (by :func:`to_peaks`), so that
        picking can run elsewhere, e.g. in worker processes during an import.
        """
        name = clean_name(name)
        role_word = normalise_role(role) if role is not None else None
        tokens = prep_mod.parse_tokens(prep) if prep is not None else []
        tokens = list(dict.fromkeys([*tokens, *prep_mod.parse_tokens(data.meta.prep)]))
        if not force:
            self._refuse_duplicate(data)
        if peaks is None:
            peaks = to_peaks(data, tokens)
        if len(peaks) == 0:
            raise ValidationError("no bands found in this spectrum; nothing to add")
        enc = self.encoding
        vector = encode(comparable_peaks(peaks, tokens, enc), enc)
        existing = self.store.compound_by_name(name)
        warnings: list[str] = []
        structure = structure_ids(smiles) if smiles else None
        if existing and structure and existing.get("canonical_smiles"):
            if existing["canonical_smiles"] != structure["canonical_smiles"]:
                raise ValidationError(
                    f"{name!r} is in the library with SMILES {existing['smiles']}, "
                    f"not {smiles}; use another name or fix the SMILES"
                )
        warnings += quality_warnings(data, peaks, tokens)
        if smiles:
            warnings += consistency_warnings(data, peaks, smiles, tokens, strict=strict)
        if check_similar and self.store.counts()["spectra"]:
            warnings += self._similar_warnings(data, peaks, tokens, name, existing)
        with self.store.write():
            if not force:  # again inside the write: another process may have added it
                self._refuse_duplicate(data)
            if existing is None:  # another process may have added it since the lookup above
                existing = self.store.compound_by_name(name)
            if existing:
                cid = int(existing["id"])
                new_compound = False
                if role_word and role_word != existing["role"]:
                    self.store.conn.execute(
                        "UPDATE compounds SET role = ? WHERE id = ?", (role_word, cid)
                    )
                    record(self.store, "edit", compound_id=cid, compound_name=existing["name"],
                           operator=operator, field="role", old=existing["role"],
                           new=role_word, detail="changed by an add")  # fmt: skip
            else:
                rec: dict[str, Any] = {
                    "name": name,
                    "aliases": list(aliases),
                    "role": role_word or "other",
                    "notebook": notebook,
                    "notes": note,
                    "added_by": operator,
                    "smiles": smiles,
                }
                if structure:
                    rec.update(structure)
                cid = self.store.insert_compound(rec)
                new_compound = True
            sid = self.store.insert_spectrum(
                cid,
                data,
                peaks,
                vector,
                enc.key(),
                prep=tokens,
                operator=operator,
                notes=note if not new_compound else None,
            )
            record_add(self.store, cid, name, sid, data, new_compound, operator)
        self._index = None
        return AddResult(cid, sid, name, new_compound, warnings)

    def _refuse_duplicate(self, data: Spectrum | PeakList) -> None:
        """A ValidationError when the file (same SHA-256) is already in the library."""
        dup = self.store.spectrum_by_sha(data.meta.sha256) if data.meta.sha256 else None
        if dup:
            raise ValidationError(
                f"this file is already in the library as spectrum {dup['id']} of "
                f"{dup['name']!r}; use --force to add it again"
            )

    def add_many(
        self, items: Iterable[dict[str, Any]], *, check_similar: bool = False
    ) -> list[AddResult]:
        """Add many entries; each item is a dict of :meth:`add`'s keywords plus ``data``.

        Without ``check_similar`` this is :func:`reflib.library.bulk.add_bulk`: one transaction per
        1 000 items, full spectra peak-picked in worker processes; a bad item raises, its chunk
        is not written and the chunks before it are in. With ``check_similar`` each item is
        searched against the library first and added in its own transaction.
        """
        if not check_similar:
            from reflib.library.bulk import add_bulk

            return add_bulk(self, items)
        return [
            self.add(
                item["data"],
                check_similar=check_similar,
                **{k: v for k, v in item.items() if k != "data"},
            )
            for item in items
        ]

    def _similar_warnings(
        self,
        data: Spectrum | PeakList,
        peaks: PeakList,
        tokens: list[str],
        name: str,
        existing: dict[str, Any] | None,
    ) -> list[str]:
        qpeaks = comparable_peaks(peaks, tokens, self.encoding)
        res = self._search_peaks(qpeaks, data_range(data), tokens, top=3, profile=None)
        if not res.hits:
            return []
        own_id = existing["id"] if existing else None
        others = [h for h in res.hits if h.compound_id != own_id]
        if not others:
            return []
        top = others[0]
        if res.hits[0].compound_id == top.compound_id and res.verdict == SIMILAR_WARNING_VERDICT:
            return [
                f"this spectrum matches {top.name!r} (compound {top.compound_id}) with score "
                f"{top.score:.2f}: the same compound under another name, a mislabel, or an "
                "impure sample?"
            ]
        return []

    # --- searching ----------------------------------------------------------------------------

    def index(self):
        """The search index (:mod:`reflib.library.index`): cached beside the file, rebuilt when
        stale."""
        import reflib.library.index as index_mod

        rev = self.revision
        if self._index is None or self._index.key.get("revision") != rev:
            self._index = index_mod.load(self.store)
        return self._index

    def search(
        self,
        query: Spectrum | PeakList,
        *,
        prep: str | Iterable[str] | None = None,
        top: int = 5,
        weights: str | None = None,
        where: Where | dict[str, Any] | None = None,
    ) -> SearchResult:
        """Rank the library against ``query`` and explain the top hits band by band.

        ``prep`` lists the query's preparation tokens (added to any the file names); ``weights``
        is a region profile (``functional``, ``fingerprint`` or ranges like ``1800-1650:3``);
        ``where`` restricts the references (:class:`reflib.library.filters.Where` or a dict of
        its fields, e.g. ``{"role": "product", "has_group": "ketone"}``).
        """
        return self.search_many([query], prep=prep, top=top, weights=weights, where=where)[0]

    def search_many(
        self,
        queries: Iterable[Spectrum | PeakList],
        *,
        prep: str | Iterable[str] | None = None,
        top: int = 5,
        weights: str | None = None,
        where: Where | dict[str, Any] | None = None,
    ) -> list[SearchResult]:
        """Search many unknowns at once: one blocked matrix-matrix product per group.

        Queries that share preparation and covered range are scored together. With ``where``
        only the matching references are ranked (exact scores; the others are masked out) and
        each verdict's reason says the search was restricted.
        """
        where = Where.of(where)
        if top < 1:
            raise ValidationError(f"--top must be at least 1, got {top}")
        from reflib.analysis.encode import parse_profile

        parse_profile(weights)  # validate before any work
        user_tokens = prep_mod.parse_tokens(prep) if prep is not None else []
        prepared, quality = [], []
        for qry in queries:
            tokens = list(dict.fromkeys([*user_tokens, *prep_mod.parse_tokens(qry.meta.prep)]))
            picked = to_peaks(qry, tokens)
            quality.append(quality_report(qry, picked, tokens))
            peaks = comparable_peaks(picked, tokens, self.encoding)
            prepared.append((qry.meta.source_file, peaks, data_range(qry), tokens))
        with self.store.read():  # index and the hits' bands from one snapshot of the file
            if where is not None:
                results = restricted_search(self, prepared, where, top=top, profile=weights)
            else:
                results = self._search_prepared(prepared, top=top, profile=weights)
        for res, q in zip(results, quality):
            res.quality = q
        return results

    def _search_prepared(
        self, prepared: list, *, top: int, profile: str | None, rows: np.ndarray | None = None
    ) -> list:
        """Score and explain ``prepared`` queries: (source file, comparable peaks, covered
        range, preparation tokens) each."""
        from reflib.analysis.search import score_index

        enc = self.encoding
        idx = self.index()
        vectors = [encode(p[1], enc) for p in prepared]
        results: list[SearchResult | None] = [None] * len(prepared)
        batches: dict[tuple, list[int]] = {}
        for i, (_, peaks, qrange, tokens) in enumerate(prepared):
            key = (tuple(tokens), range_key(*qrange), _holes(peaks))
            batches.setdefault(key, []).append(i)
        for (tokens, _, holes), all_members in batches.items():
            qrange = prepared[all_members[0]][2]
            # score QUERY_CHUNK queries at a time: the (references x queries) score matrix
            # stays small even for a large batch against a large library
            for c0 in range(0, len(all_members), QUERY_CHUNK):
                members = all_members[c0 : c0 + QUERY_CHUNK]
                qmat = np.vstack([vectors[i] for i in members])
                scores = (
                    score_index(qmat, idx, enc, list(tokens), qrange, profile, holes)
                    if idx.size
                    else np.zeros((0, len(members)))
                )
                if idx.size:  # references of the other phase (gas / condensed) scored again
                    from reflib.library.crossphase import rescore

                    queries = [prepared[i][1] for i in members]
                    scores = rescore(
                        self.store, enc, idx, scores, queries, list(tokens), qrange, profile
                    )
                if rows is not None:  # a filtered search: other references never rank
                    scores[~rows] = -np.inf
                self._explain_batch(prepared, members, vectors, scores, idx, top, profile, results)
        return results  # type: ignore[return-value]

    def _explain_batch(self, prepared, members, vectors, scores, idx, top, profile, results):
        """Rank and explain each query of a scored chunk, writing into ``results``."""
        for col, i in enumerate(members):
            source, peaks, qr, tk = prepared[i]
            res = self._explain_hits(peaks, vectors[i], qr, tk, scores[:, col], idx, top, profile)
            res.query_file = source
            results[i] = res

    def _search_peaks(
        self,
        peaks: PeakList,
        qrange: tuple[float | None, float | None],
        tokens: list[str],
        *,
        top: int,
        profile: str | None,
    ) -> SearchResult:
        return self._search_prepared([(None, peaks, qrange, tokens)], top=top, profile=profile)[0]

    def _explain_hits(
        self,
        peaks: PeakList,
        q: np.ndarray,
        qrange: tuple[float | None, float | None],
        tokens: list[str],
        scores: np.ndarray,
        idx,
        top: int,
        profile: str | None,
    ) -> SearchResult:
        enc = self.encoding
        grid = enc.grid()
        lo = qrange[0] if qrange[0] is not None else enc.lo
        hi = qrange[1] if qrange[1] is not None else enc.hi
        within = (max(lo, enc.lo), min(hi, enc.hi))
        masked = prep_mod.merged_regions(tokens, air=True, within=within)
        if idx.size == 0 or not np.any(q):
            reason = "the library is empty" if idx.size == 0 else "no bands in the query"
            return SearchResult(None, tokens, (lo, hi), "no-match", reason, [], masked)
        # best spectrum per compound: look at enough rows to find top+1 distinct compounds
        want = max(top, 2, 1 + NEIGHBOURS_SEEN)  # the runners-up of crowd_seen too
        picks = top_distinct(scores, idx.compound_ids, want).tolist()
        group_of = _group_lookup(idx)
        labels = _Labels(peaks, tokens)
        hits: list[Hit] = []
        explanations = []
        names = self._names([int(idx.compound_ids[i]) for i in picks])
        # the top hits' rows are read now, inside the search's snapshot; the peak lists of
        # hits below the printed ones are made only when their explanation is read
        stored = self.store.peak_rows_of_many(int(idx.spectrum_ids[i]) for i in picks[:top])
        for rank, i in enumerate(picks, start=1):
            sid = int(idx.spectrum_ids[i])
            cid = int(idx.compound_ids[i])
            g = group_of(i)
            if rank > top:  # a runner-up kept for the margin: explained only if needed below
                explanations.append((None, sid, g))
                hits.append(Hit(rank, names[cid][0], cid, sid, float(scores[i]), names[cid][1]))
                continue
            hit = Hit(rank, names[cid][0], cid, sid, float(scores[i]), names[cid][1], list(g.prep))
            hits.append(hit)
            if rank > PRINTED_HITS:  # explained when first read (the JSON reads them all)
                explanations.append((None, sid, g))
                hit.later(_explainer(enc, peaks, stored[sid], tokens, g, qrange, profile, labels))
                continue
            ref = peaks_from_rows(*stored[sid])
            ex, ref_peaks, w = _explain_one(enc, peaks, ref, tokens, g, qrange, profile)
            explanations.append((ex, ref_peaks, w))
            hit.matched, hit.missing, hit.new = ex.matched, ex.missing, ex.new
        ex1 = explanations[0][0]
        s1 = hits[0].score
        s2 = hits[1].score if len(hits) > 1 else 0.0
        features = {
            "score": s1,
            "second": s2,
            "margin": s1 - s2,
            "strong_new": float(ex1.strong_new),
            "strong_missing": float(ex1.strong_missing),
            "matched_strength": ex1.matched_strength,
            "n_query_bands": float(len(peaks)),
        }
        features["mask_share"] = mask_share(explanations[0][2])
        features["crowding"] = self._crowding(hits[0].spectrum_id)
        features["pair"] = (
            candidates_alike(
                enc,
                idx.matrix[picks[0]],
                group_of(picks[0]).prep,
                idx.matrix[picks[1]],
                group_of(picks[1]).prep,
                explanations[0][2],
            )
            if len(picks) > 1
            else 0.0
        )
        seen_rows = picks[: 1 + NEIGHBOURS_SEEN]
        _, near = in_one_frame(
            enc, q, tokens, idx.matrix[seen_rows], [group_of(i).prep for i in seen_rows]
        )
        features["crowd_seen"] = crowding_seen(near, explanations[0][2])
        features.update(band_offsets(peaks, explanations[0][1], ex1.matched))
        verdict, reason, confidence = self._verdict(features, idx.size)
        if gas_against_condensed(tokens, hits[0].prep):
            verdict, reason = strict_verdict(verdict, reason, features)
        distinguishing: dict[str, list[float]] = {}
        # calibrated: whenever the top two are close candidates (a wider margin than the rule's;
        # beyond it each hit's own missing and new bands already tell them apart)
        near = features["margin"] < (
            DISTINGUISH_MARGIN if confidence is not None else self.rule.min_margin
        )
        if verdict == "ambiguous" and len(hits) > 1 and near:
            _, p1, w1 = explanations[0]
            ex2, p2, g2 = explanations[1]
            if ex2 is None:
                sid2 = p2
                p2 = comparable_peaks(
                    peaks_from_rows(*stored[sid2]) if sid2 in stored else self.store.peaks_of(sid2),
                    g2.prep,
                    enc,
                )
            only1, only2 = distinguishing_bands(p1, p2, grid, w1)
            distinguishing = {hits[0].name: only1, hits[1].name: only2}
        labels.annotate(*hits[:PRINTED_HITS])
        return SearchResult(
            query_file=None,
            query_prep=tokens,
            range_cm1=(float(max(lo, enc.lo)), float(min(hi, enc.hi))),
            verdict=verdict,
            reason=reason,
            hits=hits[:top],
            masked=masked,
            features=features,
            distinguishing=distinguishing,
            confidence=confidence,
        )

    # --- the calibrated verdict (reflib.library.calibrate) --------------------------------------

    def _model(self):
        """The stored calibration model (parsed once per stored text), or None."""
        text = self.store.get_meta("calibration")
        if text != getattr(self, "_cal_text", 0):  # 0: nothing read yet
            self._cal_text = text
            self._cal_model = load_model(self.store)
        return self._cal_model

    def forget_calibration(self) -> None:
        self._cal_text = 0

    def _crowding(self, spectrum_id: int) -> float:
        row = self.store.conn.execute(
            "SELECT score FROM neighbours WHERE spectrum_id = ?", (spectrum_id,)
        ).fetchone()
        return float(row[0]) if row else float("nan")

    def _verdict(self, features: dict[str, float], n_spectra: int):
        """Verdict, reason and confidence: the calibrated model when this library has one for
        its encoding, else the fixed rule (confidence None) and why."""
        model = self._model()
        if model is not None and model.encoding_key == self.encoding.key():
            verdict, reason, conf = model.decide(features)
            if stale(model, n_spectra, model.encoding_key):
                reason += (
                    f"; calibrated when the library had {model.n_spectra} spectra, now "
                    f"{n_spectra}: run 'reflib calibrate'"
                )
            return verdict, reason, conf
        verdict, reason = self.rule.decide(features)
        n = compound_count(self.store)
        if n < MIN_COMPOUNDS:
            why = f"{n} compound{'s' * (n != 1)}; a calibrated verdict needs {MIN_COMPOUNDS}"
        else:
            why = "not calibrated for this library yet: run 'reflib calibrate'"
        return verdict, f"{reason}; fixed rule: {why}", None

    def _names(self, compound_ids: list[int]) -> dict[int, tuple[str, str]]:
        if not compound_ids:
            return {}
        q = ",".join("?" * len(compound_ids))
        rows = self.store.conn.execute(
            f"SELECT id, name, role FROM compounds WHERE id IN ({q})", compound_ids
        ).fetchall()
        return {int(r[0]): (r[1], r[2]) for r in rows}

    # --- browsing -----------------------------------------------------------------------------

    def compounds(
        self,
        *,
        role: str | None = None,
        match: str | None = None,
        where: Where | dict[str, Any] | None = None,
    ) -> list[dict]:
        """Compounds with their spectrum count, optionally by role, a name fragment or ``where``
        (see :meth:`search`): those with at least one matching spectrum."""
        rows = self.store.list_compounds(role=role, match=match)
        where = Where.of(where)
        if where is not None:
            keep = matching_compounds(self.store, where)
            rows = [r for r in rows if int(r["id"]) in keep]
        for r in rows:
            r["preps"] = sorted({t for p in (r.get("preps") or "").split(",") for t in [p] if t})
            r["tags"] = tags_of(r)
        return rows

    def show(self, ref: str | int) -> dict[str, Any]:
        """One compound with its spectra and their peak lists."""
        import json

        c = self.store.find_compound(ref)
        c["aliases"] = json.loads(c.get("aliases") or "[]")
        c["tags"] = json.loads(c.get("tags") or "[]")
        spectra = self.store.spectra_of(int(c["id"]))
        for s in spectra:
            s["prep"] = [t for t in (s["prep"] or "").split(",") if t]
            s["peaks"] = self.store.peaks_of(int(s["id"])).to_dict()["peaks"]
        c["spectra"] = spectra
        return c

    def remove(self, ref: str | int, *, operator: str | None = None) -> dict[str, Any]:
        """Remove a compound and all its spectra; returns what was removed. The history keeps
        its record (:meth:`history`)."""
        with self.store.write():
            c = self.store.find_compound(ref)
            n = len(self.store.spectra_of(int(c["id"])))
            record(self.store, "remove", compound_id=int(c["id"]),
                           compound_name=c["name"], operator=operator,
                           detail=f"{n} spectra removed")  # fmt: skip
            self.store.remove_compound(int(c["id"]))
        self._index = None
        return {"compound_id": int(c["id"]), "name": c["name"], "spectra": n}

    def edit(self, ref: str | int, **changes: Any) -> dict[str, Any]:
        """Correct a compound (name, smiles, role, note, tag, untag, operator keywords of
        :func:`reflib.library.edits.edit_compound`), each change recorded in the history."""
        from reflib.library.edits import edit_compound

        return edit_compound(self, ref, **changes)

    def history(self, ref: str | int) -> list[dict[str, Any]]:
        """Every recorded change of one compound, oldest first (also of a removed one)."""
        return history_of(self.store, ref)

    def merge(self, other: str | Path, *, operator: str | None = None):
        """Bring another library's compounds and spectra in (:mod:`reflib.library.merge`)."""
        from reflib.library.merge import merge_library

        return merge_library(self, other, operator=operator)

    def peaks(self, spectrum_id: int) -> PeakList:
        """The stored peak list of one spectrum."""
        return self.store.peaks_of(spectrum_id)

    def reindex(self, encoding: Encoding | None = None) -> int:
        """Re-encode every stored peak list (with ``encoding`` if given); returns the count."""
        import json

        enc = encoding or self.encoding
        ids = [r[0] for r in self.store.conn.execute("SELECT id FROM spectra ORDER BY id")]
        vectors = []
        for sid in ids:
            pl = self.store.peaks_of(sid)
            vectors.append((sid, encode(comparable_peaks(pl, pl.meta.prep, enc), enc)))
        from reflib.library.store import pack_vector

        with self.store.write():
            self.store.set_meta("encoding", json.dumps(enc.to_dict(), sort_keys=True))
            self.store.conn.execute("DELETE FROM vectors")
            self.store.conn.executemany(
                "INSERT INTO vectors(spectrum_id, encoding, data) VALUES (?, ?, ?)",
                [(sid, enc.key(), pack_vector(v)) for sid, v in vectors],
            )
        self._index = None
        return len(ids)


def _group_lookup(idx):
    starts = np.array([g.start for g in idx.groups], dtype=np.int64)

    def group_of(row: int):
        return idx.groups[int(np.searchsorted(starts, row, side="right")) - 1]

    return group_of


def _explain_one(enc, peaks, ref, tokens, g, qrange, profile):
    """The band-by-band explanation of one hit (its reference's stored bands ``ref``, comparison
    group ``g``): (Explanation, the reference's comparable bands, the comparison weights)."""
    ref_peaks = comparable_peaks(ref, g.prep, enc)
    w = comparison_weights(enc, tokens, g.prep, qrange, (g.lo, g.hi), profile, _holes(peaks))
    qp, rp, w, tol = explain_args(peaks, ref_peaks, tokens, g.prep, enc.grid(), w)
    atr = atr_side(tokens, g.prep) is not None
    return explain(qp, rp, enc.grid(), w, tolerance=max(tol, _tolerance(atr))), ref_peaks, w


def _explainer(enc, peaks, stored, tokens, g, qrange, profile, labels):
    """What fills a hit's band-by-band fields when they are first read (:meth:`Hit.later`)."""

    def fill(hit: Hit) -> None:
        ref = peaks_from_rows(*stored)
        ex, _, _ = _explain_one(enc, peaks, ref, tokens, g, qrange, profile)
        hit.matched, hit.missing, hit.new = ex.matched, ex.missing, ex.new
        hit.annotations = {}
        labels.annotate(hit)

    return fill


class _Labels:
    """Candidate-group labels of a query's bands (the most telling bands), from the query's
    group analysis in its preparation ``tokens``, those given with the search included
    (:func:`reflib.chem.groups.band_texts`). The analysis is made once, when a hit first has
    a new band to label."""

    def __init__(self, query: PeakList, tokens: list[str]):
        self.query, self.tokens = query, tokens
        self._report = self._done = None

    def annotate(self, *hits: Hit) -> None:
        """Label the new bands of ``hits`` (into their ``annotations``), in one look-up."""
        if not any(h.new for h in hits):
            return  # nothing to label: skip the table look-ups
        from reflib.chem.groups import analyse, band_texts

        if self._done is None:
            self._report = analyse(self.query, prep=self.tokens) if self.tokens else None
            self._done = {}
        todo = {p for h in hits for p in h.new if p not in self._done}
        if todo:
            texts = band_texts(self.query, self._report, only=todo)
            self._done.update(
                (p, t) for p, t in zip(self.query.positions.tolist(), texts) if p in todo
            )
        for h in hits:
            for pos in h.new:
                text = self._done.get(pos)
                if text:
                    h.annotations[f"{pos:.1f}"] = text


def _holes(peaks: PeakList) -> tuple[tuple[float, float], ...]:
    """The ranges (cm-1) the picker cut out of a query (``meta.extra['holes']``)."""
    from reflib.signal.peaks import parse_holes

    return tuple(parse_holes(peaks.meta.extra.get("holes")))


def _tolerance(atr_vs_transmission: bool) -> float:
    """Band-match tolerance (cm-1): wider when exactly one side is ATR (its strong bands sit a
    few cm-1 low)."""
    from reflib.analysis.search import ATR_EXTRA_TOLERANCE, MATCH_TOLERANCE

    return MATCH_TOLERANCE + (ATR_EXTRA_TOLERANCE if atr_vs_transmission else 0.0)
