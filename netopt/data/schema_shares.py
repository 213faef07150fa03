"""The declared share rules of single sites beside the global policy: a supplier's least share, a supplier's
own caps and floors at one site, a DC's most share of a customer region (registered in order by
:mod:`netopt.data.schema`; the rule itself is :mod:`netopt.network.sourcing_caps`)."""

from __future__ import annotations

from netopt.data.declarations import Reference, Table
from netopt.data.declarations import column as _c

SUPPLIER_MIN_SHARE = _c(
    "min_share",
    "float",
    "share",
    False,
    0.0,
    "Least this supplier must provide of the supply of the product of every site it has a lane to (a "
    "contracted volume share); blank = 0, none",
    min=0,
    max=1,
)
"""Column of ``suppliers``."""

DC_REGION_SHARE = _c(
    "max_region_share",
    "float",
    "share",
    False,
    1.0,
    "Most this DC may deliver of any one customer region's demand (all products; customers.region), so "
    "each region is served from two DCs or more; blank = 1, none",
    min=0,
    max=1,
)
"""Column of ``dcs``."""

SOURCING_SHARES = Table(
    "sourcing_shares",
    "Share rules of one supplier at one site (optional): most and least it may provide of that plant's or "
    "DC's supply of a product, beside the policy's and the suppliers' own (the tightest counts).",
    (
        _c("supplier", "str", "", True, None, "Supplier site code"),
        _c("site", "str", "", True, None, "Receiving plant or DC"),
        _c("product", "str", "", False, "", "Material or product; blank = every product (a product's own row wins)"),
        _c("max_share", "float", "share", False, 1.0, "Most share of the site's supply of the product", min=0, max=1),
        _c("min_share", "float", "share", False, 0.0, "Least share of the site's supply of the product", min=0, max=1),
    ),
    key=("supplier", "site", "product"),
    required=False,
    references=(
        Reference("supplier", "suppliers", "supplier"),
        Reference("product", "products", "product", allow_blank=True),
    ),
)
