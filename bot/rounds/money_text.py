"""Amounts as people read them: exact minor units shown in the group's currency format.

Refusals and messages never show minor units ("70000"); they show ``€700.00`` the way the
group's locale writes it (Babel, CLDR data). The adapter's texts use the same function.
"""

from __future__ import annotations

from decimal import Decimal

from babel.numbers import format_currency, get_currency_precision


def shown(minor: int, currency: str, locale: str = "en") -> str:
    """``€1,234.50`` for 123450 EUR in English; ``1.234,50 €`` in German."""
    decimals: int = get_currency_precision(currency)
    return str(format_currency(Decimal(minor).scaleb(-decimals), currency, locale=locale))
