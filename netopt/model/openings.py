"""DC openings: keep/close existing DCs, open candidates, size options, open-count limits.

Variables: ``open[o]`` binary per opening option (a DC without size options has one).
Cost: ``dc_fixed`` (fixed cost of each chosen option, currency/yr), ``dc_closing``
(closing cost of each existing DC left closed) and ``dc_opening`` (opening cost of each candidate
opened); in a case with periods the one-off costs are charged by ``netopt.model.phasing`` instead.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index


def add(b: Builder, fixed_open: np.ndarray | None = None) -> None:
    """Openings: which DCs are open, and at which size.

    One binary per opening option o (a DC with rows in ``dc_sizes`` has one option per size,
    any other DC one option).  y_o = 0 when the DC is forced closed; y_o = 1 when it is forced
    open and has one option; a held network fixes every y_o (``fixed_open``) and drops the
    rows marked "not held".

        one_size_per_dc:  Σ_{o ∈ O(d)} y_o ≤ 1        ∀ DC d with |O(d)| ≥ 2
        forced_open_dc:   Σ_{o ∈ O(d)} y_o ≥ 1        ∀ DC d forced open with |O(d)| ≥ 2 (not held)
        min_open_dcs:     Σ_{o ∈ O} y_o ≥ N_min        when N_min > 0 (not held)
        max_open_dcs:     Σ_{o ∈ O} y_o ≤ N_max        when N_max ≥ 0 (not held)

        C[dc_fixed]   = Σ_{o ∈ O} F_o y_o
        C[dc_closing] = Σ_{d ∈ D_exist} K_d (1 − Σ_{o ∈ O(d)} y_o)
        C[dc_opening] = Σ_{o ∈ O(d), d ∉ D_exist} A_d y_o

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | O, O(d) | opening options, those of DC d | | ``net.options`` rows, column ``dc`` |
    | y_o | option o chosen (DC open at that size) | binary | variable block ``open`` |
    | N_min, N_max | least and most options open (−1 = no limit) | DCs | settings ``policy.min_open_dcs``, ``policy.max_open_dcs`` |
    | F_o | fixed cost of option o | currency/yr | ``options.fixed_cost`` |
    | D_exist | DCs with status existing | | ``options.status`` |
    | K_d | cost of closing existing DC d (one-off, counted once) | currency | ``options.closing_cost`` |
    | A_d | cost of opening candidate DC d (one-off, counted once) | currency | ``options.opening_cost`` |
    """
    o = b.net.options
    n = len(o)
    lb = np.zeros(n)
    ub = np.ones(n)
    closed = o["force"].eq("closed").to_numpy()
    ub[closed] = 0.0
    dc_labels, dc_of = group_index(o, ["dc"])
    n_opt = np.bincount(dc_of, minlength=len(dc_labels))
    force_open = o["force"].eq("open").to_numpy()
    single = n_opt[dc_of] == 1
    lb[force_open & single] = 1.0
    if fixed_open is not None:
        lb = np.asarray(fixed_open, dtype=float).copy()
        ub = lb.copy()
    b.add_vars("open", o[["dc", "size"]], lb=lb, ub=ub, binary=True)
    idx = np.arange(n)

    # At most one size per site; a forced-open site with sizes must choose one.
    multi = n_opt > 1
    if multi.any():
        sel = multi[dc_of]
        rows = dc_of[sel]
        keep = np.flatnonzero(multi)
        remap = -np.ones(len(dc_labels), int)
        remap[keep] = np.arange(len(keep))
        labels = dc_labels.iloc[keep]
        b.add_rows("one_size_per_dc", labels, [Term("open", idx[sel], np.ones(sel.sum()), remap[rows])], "<=", 1.0)
        fo = labels["dc"].isin(o.loc[force_open, "dc"]).to_numpy()
        if fo.any() and fixed_open is None:
            fsel = sel & force_open
            rr = remap[dc_of[fsel]]
            sub = np.flatnonzero(fo)
            rmap = -np.ones(len(labels), int)
            rmap[sub] = np.arange(len(sub))
            b.add_rows(
                "forced_open_dc", labels.iloc[sub], [Term("open", idx[fsel], np.ones(fsel.sum()), rmap[rr])], ">=", 1.0
            )

    pol = b.net.settings["policy"]
    total = pd.DataFrame({"rule": ["open DC count"]})
    one = np.zeros(n, int)
    if int(pol["min_open_dcs"]) > 0 and fixed_open is None:
        b.add_rows("min_open_dcs", total, [Term("open", idx, np.ones(n), one)], ">=", float(pol["min_open_dcs"]))
    if int(pol["max_open_dcs"]) >= 0 and fixed_open is None:
        b.add_rows("max_open_dcs", total, [Term("open", idx, np.ones(n), one)], "<=", float(pol["max_open_dcs"]))

    b.add_cost("dc_fixed", Term("open", idx, o["fixed_cost"].to_numpy(float)))
    existing = o["status"].eq("existing").to_numpy()
    close = o["closing_cost"].to_numpy(float)
    # closing cost × (1 − Σ options open) for each existing DC.
    per_dc_close = pd.Series(close[existing], index=o.loc[existing, "dc"]).groupby(level=0).first()
    b.add_cost("dc_closing", Term("open", idx[existing], -close[existing]), constant=float(per_dc_close.sum()))
    cand = ~existing
    b.add_cost("dc_opening", Term("open", idx[cand], o["opening_cost"].to_numpy(float)[cand]))


def option_terms(
    b: Builder,
    dcs: np.ndarray,
    rows: np.ndarray,
    coef: np.ndarray,
    use_capacity: bool = False,
    big_m: float | None = None,
) -> Term:
    """Term adding ``coef[r] × Σ_options(open[o] × (capacity[o] if use_capacity else 1))`` to row ``rows[r]``.

    With ``use_capacity`` an unlimited option capacity is replaced by ``big_m``.
    """
    o = b.net.options
    opt = pd.DataFrame({"dc": o["dc"].to_numpy(), "opt": np.arange(len(o)), "cap": o["capacity"].to_numpy(float)})
    req = pd.DataFrame({"dc": np.asarray(dcs), "row": np.asarray(rows), "coef": np.asarray(coef, float)})
    j = req.merge(opt, on="dc")
    c = j["coef"].to_numpy(float)
    if use_capacity:
        cap = j["cap"].to_numpy(float)
        cap = np.where(np.isinf(cap), float(big_m if big_m is not None else np.inf), cap)
        c = c * cap
    return Term("open", j["opt"].to_numpy(int), c, j["row"].to_numpy(int))
