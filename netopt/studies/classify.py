"""ABC and XYZ classes of products and customers, and writing them back into a case.

Symbols (units in brackets):

| symbol | meaning | unit |
|---|---|---|
| ``q_cp`` | annual demand of customer c for product p (``demand.quantity``) | units/yr |
| ``v_p`` | unit value of p (``products.unit_value``) | currency/unit |
| ``π_p`` | unit selling price of p (``products.unit_price``) | currency/unit |
| ``cv_cp`` | coefficient of variation of ``q_cp`` (``demand.demand_cv``, blank = ``products.demand_cv``) | ratio |

Measures of an item (a finished product, or a customer), summed over its demand rows:
volume ``Σ q``, usage value ``Σ q·v``, revenue ``Σ q·π``, margin ``Σ q·(π − v)``.

**ABC.** Items are ranked by the measure, largest first; equal values are ranked by code (ascending),
so the ranking is reproducible.  With boundaries ``a < b``:

- *by value share* (default 0.80, 0.95): an item is A while the share of the measure *before* it is
  below ``a`` (the item that crosses ``a`` is still A), B while it is below ``b``, else C;
- *by item share* (e.g. 0.20, 0.50): an item is A while the share of items before it is below ``a``,
  B while below ``b``, else C.

Ties: items of equal value always get one class, the class of the first of them in the ranking (a
boundary never splits equal values).  An item whose measure is 0 (or below, for margin) is C.  The
common split (A ≈ top 20 % of items carrying ≈ 80 % of the value, B the next 30 % with ≈ 15 %, C the
rest) is common practice, no source.

**XYZ** (optional).  Each item's demand variability is the CV of its annual demand, pooling its
demand rows as independent: ``cv = √(Σ (cv_cp q_cp)²) / Σ q_cp``; X while ``cv ≤ x``, Y while
``cv ≤ y``, else Z (defaults 0.25, 0.50: common practice, no source).

**Writing back.** A copy of the case gets ``customers.service_class`` from the customers' ABC class
(each class mapped onto one of the case's service classes; a customer without demand has no class
and keeps its own) and ``products.cycle_service_level`` from
the products' class, so the service rules and the safety stock (``z = Φ⁻¹(CSL)``) follow the class.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem

MEASURES = ("usage_value", "revenue", "margin", "volume")
CLASSES = ("A", "B", "C")
DEFAULT_VALUE_BOUNDS = (0.80, 0.95)  # common practice, no source
DEFAULT_ITEM_BOUNDS = (0.20, 0.50)  # common practice, no source
DEFAULT_XYZ_BOUNDS = (0.25, 0.50)  # common practice, no source
MEASURE_COLUMN = {"usage_value": "usage_value", "revenue": "revenue", "margin": "margin", "volume": "units"}


@dataclass
class Rule:
    """How class boundaries are set: ``basis`` "value" or "items", boundaries ``a < b`` (shares)."""

    basis: str = "value"
    a: float = DEFAULT_VALUE_BOUNDS[0]
    b: float = DEFAULT_VALUE_BOUNDS[1]

    def text(self) -> str:
        what = "share of the measure" if self.basis == "value" else "share of items"
        return f"{what} before the item: A below {self.a:g}, B below {self.b:g}, C the rest"


def abc_classes(values, codes, rule: Rule) -> pd.DataFrame:
    """Rank items by value (largest first, ties by code) and give each its class.

    Returns columns: item, value, rank, share, cumulative_share, item_share, class (in rank order).
    """
    df = pd.DataFrame({"item": [str(c) for c in codes], "value": np.asarray(values, dtype=float)})
    df = df.sort_values(["value", "item"], ascending=[False, True], kind="stable").reset_index(drop=True)
    n = len(df)
    positive = df["value"].clip(lower=0.0)
    total = float(positive.sum())
    df["rank"] = np.arange(1, n + 1)
    df["share"] = positive / total if total > 0 else 0.0
    df["cumulative_share"] = df["share"].cumsum()
    df["item_share"] = df["rank"] / n if n else 0.0
    before = (df["cumulative_share"] - df["share"]) if rule.basis == "value" else (df["rank"] - 1) / max(n, 1)
    cls = np.where(before < rule.a, "A", np.where(before < rule.b, "B", "C"))
    cls = np.where(positive.to_numpy() > 0, cls, "C")
    first = df.groupby("value", sort=False)["rank"].transform("min").to_numpy() - 1  # a tie takes its first's class
    df["class"] = cls[first]
    return df


def xyz_classes(cv, bounds: tuple[float, float]) -> np.ndarray:
    """X while cv ≤ bounds[0], Y while cv ≤ bounds[1], else Z (a blank cv is blank)."""
    cv = np.asarray(cv, dtype=float)
    out = np.where(cv <= bounds[0], "X", np.where(cv <= bounds[1], "Y", "Z"))
    return np.where(np.isnan(cv), "", out)


def demand_lines(case: Case) -> pd.DataFrame:
    """The case's demand rows of finished products with their units, usage value, revenue, margin and σ.

    Columns: customer, product, units, usage_value, revenue, margin (currency/yr; revenue and margin NaN
    without a price), sd (units/yr, σ = cv × q).
    """
    t = case.tables
    products = t["products"].set_index("product")
    d = t["demand"][["customer", "product", "quantity", "demand_cv"]].copy()
    d["units"] = d["quantity"].astype(float)
    value = d["product"].map(products["unit_value"]).astype(float)
    price = (
        d["product"].map(products["unit_price"]).astype(float)
        if "unit_price" in products
        else pd.Series(np.nan, index=d.index)
    )
    cv = pd.to_numeric(d["demand_cv"], errors="coerce").fillna(d["product"].map(products["demand_cv"]).astype(float))
    d["usage_value"] = d["units"] * value
    d["revenue"] = d["units"] * price
    d["margin"] = d["units"] * (price - value)
    d["sd"] = cv.fillna(0.0) * d["units"]
    return d[["customer", "product", "units", "usage_value", "revenue", "margin", "sd"]]


def check_measure(case: Case, measure: str) -> None:
    """CaseError naming every finished product with demand but no unit_price when the measure needs one."""
    if measure not in MEASURES:
        raise CaseError([Problem("classify", None, None, f"measure must be one of {', '.join(MEASURES)}")])
    if measure not in ("revenue", "margin"):
        return
    t = case.tables
    sold = set(t["demand"].loc[t["demand"]["quantity"] > 0, "product"].astype(str))
    p = t["products"]
    rows = p.index if p.index.name == "row" else pd.RangeIndex(2, len(p) + 2)  # the file's row numbers
    p = p.reset_index(drop=True)
    price = pd.to_numeric(p["unit_price"], errors="coerce") if "unit_price" in p else pd.Series(np.nan, p.index)
    missing = p.index[p["product"].astype(str).isin(sold) & price.isna()]
    if len(missing):
        raise CaseError(
            [
                Problem(
                    "products",
                    int(rows[i]),
                    "unit_price",
                    f"product '{p.loc[i, 'product']}' has demand but no unit_price: ranking by {measure} needs "
                    "a selling price for every product sold",
                )
                for i in missing
            ]
        )


def classify_items(
    case: Case,
    scope: str,
    measure: str = "usage_value",
    rule: Rule | None = None,
    xyz: tuple[float, float] | None = None,
) -> pd.DataFrame:
    """ABC (and XYZ when ``xyz`` bounds are given) of the case's finished products or customers.

    Args:
        scope: "products" or "customers"; measure: one of :data:`MEASURES`; rule: class boundaries.

    Returns:
        The ``abc_products`` / ``abc_customers`` table (declared in :mod:`netopt.data.classify_schema`).
    """
    rule = rule or Rule()
    check_measure(case, measure)
    key = "product" if scope == "products" else "customer"
    lines = demand_lines(case)
    g = lines.groupby(key, sort=True).agg(
        units=("units", "sum"),
        usage_value=("usage_value", "sum"),
        revenue=("revenue", lambda s: s.sum(min_count=len(s))),
        margin=("margin", lambda s: s.sum(min_count=len(s))),
        var=("sd", lambda s: float((s**2).sum())),
    )
    ranked = abc_classes(g[MEASURE_COLUMN[measure]].to_numpy(float), g.index, rule)
    g = g.reindex(ranked["item"])
    out = ranked[["rank", "item"]].copy()
    out["measure"] = measure
    for c in ("units", "usage_value", "revenue", "margin"):
        out[c] = g[c].to_numpy(float)
    out[["share", "cumulative_share", "item_share", "class"]] = ranked[
        ["share", "cumulative_share", "item_share", "class"]
    ]
    units = g["units"].to_numpy(float)
    out["demand_cv"] = np.where(units > 0, np.sqrt(g["var"].to_numpy(float)) / np.where(units > 0, units, 1.0), np.nan)
    out["xyz"] = xyz_classes(out["demand_cv"], xyz) if xyz is not None else ""
    return out.reset_index(drop=True)


def class_summary(ranked: pd.DataFrame, scope: str, rule: Rule) -> pd.DataFrame:
    """The ``abc_summary`` rows of one ranked table: items, item share, value and value share per class."""
    measure = str(ranked["measure"].iloc[0]) if len(ranked) else ""
    col = MEASURE_COLUMN.get(measure, "usage_value")
    g = ranked.groupby("class").agg(items=("item", "size"), value=(col, "sum"), value_share=("share", "sum"))
    g = g.reindex(list(CLASSES), fill_value=0).reset_index()
    g.insert(0, "scope", scope)
    g.insert(3, "item_share", g["items"] / max(len(ranked), 1))
    g["measure"] = measure
    g["rule"] = rule.text()
    return g[["scope", "class", "items", "item_share", "value", "value_share", "measure", "rule"]]


def parse_class_map(text: str | None, what: str, number: bool) -> dict[str, object]:
    """``A=x,B=y,C=z`` → {class: value}; every class A, B, C must be given once (ValueError otherwise)."""
    out: dict[str, object] = {}
    for part in (text or "").split(","):
        if not part.strip():
            continue
        k, sep, v = part.partition("=")
        k, v = k.strip().upper(), v.strip()
        if not sep or k not in CLASSES or not v or k in out:
            raise ValueError(f"{what}: give each of A, B, C once as A=…,B=…,C=… (not {part.strip()!r})")
        out[k] = float(v) if number else v
    missing = [c for c in CLASSES if c not in out]
    if missing:
        raise ValueError(f"{what}: no value for class {', '.join(missing)}")
    return out


def classes_into_case(
    case: Case,
    customers: pd.DataFrame | None,
    products: pd.DataFrame | None,
    service_by_class: dict[str, object] | None,
    csl_by_class: dict[str, object] | None,
) -> Case:
    """A copy of ``case`` whose customers take the service class of their ABC class and whose products take
    the cycle service level of theirs (each only when its map is given); every problem at once."""
    c = case.copy()
    t = c.tables
    problems: list[Problem] = []
    if service_by_class is not None and customers is not None:
        known = set(t["service_classes"]["service_class"].astype(str)) if len(t["service_classes"]) else set()
        for k, v in service_by_class.items():
            if str(v) not in known:
                shown = ", ".join(sorted(known)) or "none: the case has no service_classes table"
                problems.append(
                    Problem(
                        "service_classes", None, "service_class", f"class {k} → unknown service class '{v}' ({shown})"
                    )
                )
        cls = dict(zip(customers["item"], customers["class"]))
        new = t["customers"]["customer"].astype(str).map(cls).map(service_by_class)
        t["customers"]["service_class"] = new.fillna(t["customers"]["service_class"]).astype(str)
    if csl_by_class is not None and products is not None:
        for k, v in csl_by_class.items():
            if not 0.5 <= float(str(v)) <= 0.99999:  # the range of products.cycle_service_level
                problems.append(
                    Problem("products", None, "cycle_service_level", f"class {k}: {v} is not between 0.5 and 0.99999")
                )
        cls = dict(zip(products["item"], products["class"]))
        new = t["products"]["product"].astype(str).map(cls).map(csl_by_class).astype(float)
        old = t["products"].get("cycle_service_level", np.nan)
        t["products"]["cycle_service_level"] = new.fillna(old)
    if problems:
        raise CaseError(problems)
    return c
