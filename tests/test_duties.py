"""Duties and border crossings: sites' ISO 3166 countries, the duties and borders tables.

Checks: (1) a hand-computable duty (ad valorem on the customs value, per unit) matches the formula,
with and without freight in the customs value; (2) a duty-free route wins exactly when the duty exceeds
the freight difference; (3) the most specific duties row applies; (4) border days count in transit
time (stock in transit, service window) and border cost in freight; (5) country codes are checked
against the ISO 3166-1 list.
"""

from __future__ import annotations

import pytest

import netopt
from netopt.data.case import CaseError
from netopt.data.frames import make_case

PRICE, Q, FREIGHT = 60.0, 1_000.0, 2.0


def _case(
    duties=(),
    borders=(),
    *,
    countries=("CN", "DE", "DE"),
    second=None,
    settings=None,
    value=0.0,
    window=None,
):
    """Supplier S1 (country countries[0]) → DC D1 → customer C1, one explicit lane each; optional second
    supplier ``second = (country, price, freight)`` of the same material on its own lane to D1."""
    sups = [{"supplier": "S1", "product": "p", "lat": 0.0, "lon": 0.0, "country": countries[0], "region": "Asia"}]
    sups[0]["unit_cost"] = PRICE
    lanes = [
        {"origin": "S1", "destination": "D1", "mode": "truck", "cost_per_unit": FREIGHT, "transit_days": 10.0},
        {"origin": "D1", "destination": "C1", "mode": "truck", "cost_per_unit": 1.0, "transit_days": 1.0},
    ]
    if second is not None:
        c2, p2, f2 = second
        sups.append(
            {
                "supplier": "S2",
                "product": "p",
                "lat": 0.0,
                "lon": 0.0,
                "country": c2,
                "region": "Europe",
                "unit_cost": p2,
            }
        )
        lanes.append({"origin": "S2", "destination": "D1", "mode": "truck", "cost_per_unit": f2, "transit_days": 10.0})
    for ln in lanes:
        ln["distance_km"] = 100.0
    customers = [{"customer": "C1", "lat": 0.0, "lon": 0.0, "country": countries[2]}]
    if window is not None:
        customers[0]["service_class"] = "std"
    tables = {
        "products": [{"product": "p", "unit_weight_kg": 50.0, "unit_value": value, "holding_rate": 0.25}],
        "suppliers": sups,
        "plants": [],
        "dcs": [{"dc": "D1", "lat": 0.0, "lon": 0.0, "country": countries[1], "fixed_cost": 0.0, "status": "existing"}],
        "customers": customers,
        "demand": [{"customer": "C1", "product": "p", "quantity": Q}],
        "modes": [{"mode": "truck", "cost_per_tonne_km": 0.0, "speed_km_per_day": 500.0, "generate_lanes": False}],
        "lanes": lanes,
        "duties": list(duties),
        "borders": list(borders),
    }
    if window is not None:
        tables["service_classes"] = [
            {"service_class": "std", "max_days": window, "target_share": 1.0, "late_cost_per_unit": 5.0}
        ]
    s = {"inventory": {"safety_stock": False}, "lanes": {"legs": ["supplier-dc", "dc-customer"]}}
    for sec, v in (settings or {}).items():
        s.setdefault(sec, {}).update(v)
    return make_case(tables, s)


def _solve(case):
    r = netopt.solve(case)
    assert r.status == "optimal" and r.verification.passed, r.verification.checks
    return r


# ----------------------------------------------------------------------------- (1) by hand


def test_ad_valorem_and_per_unit_duty_match_the_formula():
    # Duty = rate × customs value + specific amount per unit (WCO/WTO: ad valorem and specific duties;
    # common practice, no source); customs value = the price paid (transaction value, WTO Valuation Agreement art. 1; from memory).
    r = _solve(_case([{"origin": "CN", "destination": "DE", "ad_valorem": 0.05, "per_unit": 0.4}]))
    assert r.cost["duties"] == pytest.approx(Q * (0.05 * PRICE + 0.4), rel=1e-12)
    assert r.tables["flows"]["duty_cost"].sum() == pytest.approx(r.cost["duties"], rel=1e-12)
    assert r.cost["transport"] == pytest.approx(Q * (FREIGHT + 1.0), rel=1e-12)  # duty is not freight


def test_customs_value_with_freight():
    # The value delivered to the border: goods + freight (the CIF basis; common practice, no source).
    case = _case(
        [{"origin": "CN", "destination": "DE", "ad_valorem": 0.05}],
        settings={"duties": {"customs_value_includes_freight": True}},
    )
    r = _solve(case)
    assert r.cost["duties"] == pytest.approx(Q * 0.05 * (PRICE + FREIGHT), rel=1e-12)


def test_no_duty_within_one_country_or_without_a_country():
    row = [{"origin": "CN", "destination": "DE", "ad_valorem": 0.05, "per_unit": 0.4}]
    assert _solve(_case(row, countries=("DE", "DE", "DE"))).cost["duties"] == 0.0
    assert _solve(_case(row, countries=("CN", "", "DE"))).cost["duties"] == 0.0


# ----------------------------------------------------------------------------- (2) the route choice


@pytest.mark.parametrize("duty, winner", [(0.9, "S1"), (1.1, "S2")])
def test_duty_free_route_wins_exactly_when_the_duty_exceeds_the_freight_difference(duty, winner):
    # S1 (CN, dutiable) ships for FREIGHT, S2 (TR, duty-free) for FREIGHT + 1 at the same price:
    # the duty-free route wins iff duty > 1 (the freight difference).
    case = _case([{"origin": "CN", "destination": "DE", "per_unit": duty}], second=("TR", PRICE, FREIGHT + 1.0))
    r = _solve(case)
    f = r.tables["flows"]
    used = set(f.loc[f["origin_kind"] == "supplier", "origin"])
    assert used == {winner}
    expected_duty = Q * duty if winner == "S1" else 0.0
    assert r.cost["duties"] == pytest.approx(expected_duty, rel=1e-12)


def test_ad_valorem_duty_tips_the_route_at_the_freight_difference():
    # 2 % of 60 = 1.2 per unit > 1.0 freight difference: the duty-free supplier wins; 1 % (0.6) does not.
    for rate, winner in ((0.02, "S2"), (0.01, "S1")):
        case = _case([{"origin": "Asia", "destination": "DE", "ad_valorem": rate}], second=("TR", PRICE, FREIGHT + 1))
        f = _solve(case).tables["flows"]
        assert set(f.loc[f["origin_kind"] == "supplier", "origin"]) == {winner}


# ----------------------------------------------------------------------------- (3) which row applies


def test_the_most_specific_duties_row_applies():
    rows = [
        {"origin": "Asia", "destination": "DE", "ad_valorem": 0.10},  # region, every product
        {"origin": "Asia", "destination": "DE", "product": "p", "ad_valorem": 0.08},  # region, the product
        {"origin": "CN", "destination": "DE", "ad_valorem": 0.03},  # country, every product: wins over region
    ]
    assert _solve(_case(rows)).cost["duties"] == pytest.approx(Q * 0.03 * PRICE, rel=1e-12)
    rows.append({"origin": "CN", "destination": "DE", "product": "p", "ad_valorem": 0.01})  # country and product
    assert _solve(_case(rows)).cost["duties"] == pytest.approx(Q * 0.01 * PRICE, rel=1e-12)
    only_region = [r for r in rows if r["origin"] == "Asia"]
    assert _solve(_case(only_region)).cost["duties"] == pytest.approx(Q * 0.08 * PRICE, rel=1e-12)


# ----------------------------------------------------------------------------- (4) borders


def test_border_days_count_in_transit_and_its_cost_in_freight():
    border = [{"origin_country": "DE", "destination_country": "CH", "days": 2.0, "cost_per_tonne": 20.0}]
    case = _case(borders=border, countries=("DE", "DE", "CH"), value=100.0)
    r = _solve(case)
    f = r.tables["flows"].set_index("destination")
    assert f.loc["C1", "transit_days"] == pytest.approx(1.0 + 2.0)
    # Freight + crossing cost per tonne × 50 kg; stock in transit by Little's law (L = λW; Little 1961).
    assert r.cost["transport"] == pytest.approx(Q * (FREIGHT + 1.0 + 20.0 * 0.05), rel=1e-12)
    assert r.cost["pipeline_inventory"] == pytest.approx(Q * 100.0 * 0.25 * (10.0 + 3.0) / 365, rel=1e-12)


def test_a_border_row_applies_both_ways_unless_told_not_to():
    back = [{"origin_country": "CH", "destination_country": "DE", "days": 2.0}]
    r = _solve(_case(borders=back, countries=("DE", "DE", "CH")))
    assert r.tables["flows"].set_index("destination").loc["C1", "transit_days"] == pytest.approx(3.0)
    one_way = [dict(back[0], both_ways=False)]
    r = _solve(_case(borders=one_way, countries=("DE", "DE", "CH")))
    assert r.tables["flows"].set_index("destination").loc["C1", "transit_days"] == pytest.approx(1.0)


def test_border_days_push_a_delivery_out_of_its_window():
    border = [{"origin_country": "DE", "destination_country": "CH", "days": 1.5}]
    assert _solve(_case(countries=("DE", "DE", "CH"), window=2.0)).cost["late_delivery"] == 0.0
    r = _solve(_case(borders=border, countries=("DE", "DE", "CH"), window=2.0))
    assert r.cost["late_delivery"] == pytest.approx(Q * 5.0, rel=1e-12)  # every unit late at 5 per unit


# ----------------------------------------------------------------------------- (5) country codes


@pytest.mark.parametrize("code", ["DE", "CN", "GB", "TR", "CH", "VN", "MY"])
def test_iso_codes_are_accepted(code):
    # Officially assigned ISO 3166-1 alpha-2 codes (from memory); the list netopt reads is pycountry's.
    _case(countries=(code, "DE", "DE"))


@pytest.mark.parametrize("code, said", [("UK", "'GB'"), ("de", "'DE'"), ("XX", "not an ISO"), ("EU", "not an ISO")])
def test_codes_outside_iso_3166_are_refused_with_table_row_and_column(code, said):
    # UK and EU are reserved, not assigned, in ISO 3166-1 (from memory); lower case is not the standard's form.
    with pytest.raises(CaseError) as e:
        _case(countries=("CN", code, "DE"))
    (p,) = e.value.problems
    assert (p.table, p.row, p.column) == ("dcs", 2, "country") and said in p.message


def test_pycountry_agrees_on_the_codes_netopt_accepts():
    # The reference list: pycountry's ISO 3166-1 (a PyPI package kept in step with the ISO maintenance agency).
    import pycountry

    from netopt.data.countries import ISO_ALPHA2

    assert len(ISO_ALPHA2) == len(pycountry.countries) >= 249  # 249 assigned codes (ISO 3166-1:2020; from memory)
    assert pycountry.countries.get(alpha_2="GB").name == "United Kingdom"


def test_duties_and_borders_codes_are_checked():
    with pytest.raises(CaseError) as e:
        _case(
            [{"origin": "Asai", "destination": "Germany", "ad_valorem": 0.1}],
            [{"origin_country": "UK", "destination_country": "DE", "days": 1.0}],
        )
    where = {(p.table, p.column) for p in e.value.problems}
    assert where == {("duties", "origin"), ("duties", "destination"), ("borders", "origin_country")}
