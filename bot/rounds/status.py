"""Where a round stands, for the group: how many questions are answered and who is awaited.

Never anyone's answers: only counts and the names of people the round is waiting for. Read
only; used by the status command and by the progress line the adapter keeps up to date.
"""

from __future__ import annotations

from bot.rounds.context import Context
from bot.rounds.message_facts import round_facts
from bot.rounds.messages import StatusFacts
from bot.rounds.phases import Phase
from bot.rounds.records import RoundRecord
from bot.rounds.searches import expected_rounds, round_of


async def status_of(ctx: Context, record: RoundRecord) -> StatusFacts:
    """Count answered questions and name who the round waits for in its current phase."""
    members = await ctx.tx.members(record.id)
    names = {m.user_id: m.display_name for m in members}
    answered = sum(
        1
        for q in await ctx.tx.questions(record.id)
        if q.answered_at is not None and q.withdrawn_at is None
    )
    waiting: list[int] = []
    round_number = expected = None
    if record.phase is Phase.ASKING:
        search = await ctx.search(record)
        round_number, expected = round_of(search), expected_rounds(search)
        for question in search.open_questions():
            if int(question.member) not in waiting:
                waiting.append(int(question.member))
    elif record.phase is Phase.PROPOSED:
        waiting = [m.user_id for m in members if m.accepted_at is None]
    return StatusFacts(
        round_facts(record, members),
        answered,
        tuple((user_id, names.get(user_id, "?")) for user_id in waiting),
        round_number,
        expected,
    )
