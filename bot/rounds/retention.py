"""The retention policy: what a finished round keeps, and for how long the rest stays.

A round that ended (agreed, cancelled or lapsed) more than ``keep_answers_days`` ago loses
everything that records what members answered privately: its questions, button tokens,
choices about earlier answers, timers, the audit rows of kinds
:data:`~bot.rounds.records.PRIVATE_AUDIT_KINDS`, and its search (snapshot and steps); it is
marked forgotten (``rounds.forgotten_at``). Its members, settings, the group-visible audit
rows (created, joined, proposals, acceptances, the agreement) and the written agreement stay, so
``/agreements`` shows it as before. Processed event keys and sent or dropped messages older
than ``keep_log_days`` are deleted too (messages of open rounds stay).

The adapter runs :meth:`bot.rounds.engine.Engine.forget` once a day; both periods are
settings (``FLATPACT_KEEP_ANSWERS_DAYS``, ``FLATPACT_KEEP_LOG_DAYS``). Whatever reads a
finished round's walk copes with its absence: a re-run of a forgotten round asks everyone
afresh, ``/myanswers`` says the answers were deleted, and no picture can be drawn.
"""

from __future__ import annotations

from bot.rounds.agreement_records import record_agreement, worked_out
from bot.rounds.context import DAY, EngineConfig
from bot.rounds.phases import ENDED_PHASES, Phase
from bot.rounds.records import PRIVATE_AUDIT_KINDS
from bot.rounds.store_port import Transaction


async def forget(tx: Transaction, now: int, config: EngineConfig) -> list[int]:
    """Apply the policy at ``now``; returns the ids of the rounds forgotten just now."""
    forgotten: list[int] = []
    for record in await tx.rounds_to_forget(now - config.keep_answers_days * DAY, ENDED_PHASES):
        if record.phase is Phase.SETTLED:
            # Settled before agreements were stored: keep its agreement before the walk goes.
            stored = {row.round_id for row in await tx.agreements(record.group_id)}
            facts = None if record.id in stored else await worked_out(tx, record)
            if facts is not None:
                await record_agreement(tx, facts, record.updated_at)
        await tx.forget_round(record.id, now, PRIVATE_AUDIT_KINDS)
        forgotten.append(record.id)
    await tx.forget_log(now - config.keep_log_days * DAY)
    return forgotten
