"""Written agreements, stored when they are made and read back for ``/agreements``.

The facts of the written agreement (:func:`~bot.rounds.message_facts.agreement_facts`) are
stored in the transaction that settles the round, so the list of past agreements needs no
walk, no solver and no write lock, and it outlives the deletion of the round's answers
(:mod:`bot.rounds.retention`). Rounds settled before agreements were stored have no row;
theirs are worked out from the walk, as before, while the walk is still there.
"""

from __future__ import annotations

from dataclasses import replace

from bot.rounds.errors import StorageFault
from bot.rounds.message_facts import agreement_facts
from bot.rounds.messages import AgreementFacts
from bot.rounds.outbox_codec import decode_facts, encode_facts
from bot.rounds.records import RoundRecord
from bot.rounds.search_steps import stored_search
from bot.rounds.store_port import Transaction


async def record_agreement(tx: Transaction, facts: AgreementFacts, at: int) -> None:
    """Keep the written agreement with the round (inside the settling transaction)."""
    await tx.add_agreement(facts.round_id, facts.group_id, at, encode_facts(facts))


async def history(tx: Transaction, group_id: int) -> list[AgreementFacts]:
    """The group's agreements, oldest first: stored ones, and older ones worked out."""
    found: dict[int, AgreementFacts] = {}
    for row in await tx.agreements(group_id):
        stored = decode_facts(row.facts)
        if not isinstance(stored, AgreementFacts):
            raise StorageFault(f"round {row.round_id}: the stored agreement is not one")
        # A group that became a supergroup keeps its agreements under the new chat id.
        found[row.round_id] = replace(stored, group_id=row.group_id)
    for record in await tx.unrecorded_settled_rounds(group_id):
        computed = await worked_out(tx, record)
        if computed is not None:
            found[record.id] = computed
    return [found[round_id] for round_id in sorted(found)]


async def worked_out(tx: Transaction, record: RoundRecord) -> AgreementFacts | None:
    """A settled round's written agreement from its walk (rounds from before migration 7)."""
    search = await stored_search(tx, record)
    proposal = None if search is None else search.proposal()
    if proposal is None:
        return None
    return agreement_facts(record, await tx.members(record.id), proposal)
