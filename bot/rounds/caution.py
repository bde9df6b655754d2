"""Wording shared by the chat texts (:mod:`bot.adapter.texts`) and the written agreement.

Our own words throughout. Every proposal, settlement and agreement carries this caution: a
division is a suggestion, money can hurt people, and the lease and local tenancy law come first.
"""

from __future__ import annotations

#: The short form, wherever prices are shown again (lists, prompts, picture captions).
SHORT_CAUTION = (
    "A suggestion, not legal or financial advice; your lease and tenancy law come first."
)
CAUTION = (
    "This split is a suggestion worked out from your answers, not legal or financial advice. "
    "Your lease and local tenancy law come first; if they say otherwise, follow them."
)
