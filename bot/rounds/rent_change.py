"""The rent changed: re-price the last agreement instead of asking everyone again.

An admin sends the new monthly total. The group's latest agreement (same members, same rooms)
becomes a new round that starts *proposed*: every let room's price moves by an equal share of
the change (:mod:`bot.rounds.repricing` says why that keeps the split free of envy when money
counts one-for-one, and where leftover minor units go). Shared costs and amounts per person
stay as agreed: the whole change goes to the rooms. Every member confirms with the usual
agree / swap buttons; the last agreement settles the new round and stores its written
agreement beside the old one, which stays in the history (``/agreements`` lists both).

Decisions:

* **Who**: the admin of the agreed round or a group admin (and, with the group's option set,
  only group admins), as for a re-run.
* **Empty rooms** keep staying empty; their indicated price moves with the others (never less,
  never below the floor), so nobody would rather move there now either.
* **Floor**: a let room that would cost less than the lowest price per room is refused with
  one line naming the room and the amounts; the admin starts a fresh round (``/again``, then
  ``/adjust rent ...``), whose questions respect the floor.
* **An objection** ("at these prices I would rather take X") is taken as a fact: the round
  goes back to asking, with a fresh search that starts from that answer, exactly as an
  objection in any round; everyone then answers questions privately.
"""

from __future__ import annotations

import asyncio
from dataclasses import replace

from bot.rounds import agreement_records, rough_values
from bot.rounds.asking import propose, start_search, uphold_objection
from bot.rounds.context import Context
from bot.rounds.errors import InvalidSetup, Refusal, RefusalCode, StaleAction
from bot.rounds.events import Actor, ChangeRent
from bot.rounds.messages import AgreementFacts
from bot.rounds.money_text import shown
from bot.rounds.permissions import require_admin, require_may_start, require_member
from bot.rounds.phases import Phase, Step
from bot.rounds.records import AuditKind, RoundRecord, TimerKind
from bot.rounds.repriced_search import RepricedProposal, RepricedSearch
from bot.rounds.repricing import BelowFloor, spread_change
from bot.rounds.round_settings import RoundSettings, check_rent, check_settings
from solver import Evidence, InvalidAnswer, InvalidProblem, Options, start

#: Audit kind of a rent change (the group's information, not a private answer).
RENT_CHANGED = "rent-changed"


async def change_rent(ctx: Context, event: ChangeRent) -> None:
    """A new round, proposed at once: the latest agreement re-priced for ``event.rent``."""
    group_id, actor = event.group_id, event.actor
    if await ctx.tx.open_round(group_id) is not None:
        raise Refusal(
            "this group has an open round; finish or cancel it before changing the rent",
            RefusalCode.BUSY_GROUP,
        )
    agreed = await agreement_records.history(ctx.tx, group_id)
    previous = None if not agreed else await ctx.tx.round_by_id(agreed[-1].round_id)
    if previous is None:
        raise Refusal(
            "there is no agreement to re-price yet; set up a round with /newround",
            RefusalCode.NO_ROUND,
        )
    agreement = agreed[-1]
    require_admin(previous, actor, "change the rent")
    require_may_start(ctx.config.only_admins_start, actor)
    settings = _new_settings(previous.settings, event)
    members = await ctx.tx.members(previous.id)
    proposal = _repriced(previous, agreement, settings, event.locale)
    problem = settings.problem([str(m.user_id) for m in members])
    search = RepricedSearch(problem, proposal)

    round_id = await ctx.tx.insert_round(
        group_id=group_id,
        admin_id=actor.user_id,
        settings=settings,
        previous_round=previous.id,
        at=ctx.now,
    )
    # Joining times are kept: members are listed in joining order, and the leftover units of
    # an uneven shared part go to the first listed, so they fall on the same people as agreed.
    for member in members:
        await ctx.tx.add_member(round_id, member.user_id, member.display_name, member.joined_at)
    await ctx.tx.add_timer(round_id, TimerKind.LAPSE, None, "", ctx.now + ctx.config.lapse_after)
    await ctx.tx.add_timer(
        round_id, TimerKind.HOLD_UP, None, "", ctx.now + ctx.config.hold_up_after
    )
    await ctx.audit(round_id, AuditKind.ROUND_CREATED, actor.user_id, settings=settings.to_json())
    await ctx.audit(
        round_id,
        RENT_CHANGED,
        actor.user_id,
        from_round=previous.id,
        old_rent=previous.settings.rent,
        new_rent=settings.rent,
        prices=proposal.prices,
    )
    created = await ctx.tx.round_by_id(round_id)
    assert created is not None
    ctx.hold_new_search(created, search)
    await ctx.save_search(round_id, search)
    record = await ctx.tx.round_by_id(round_id)
    assert record is not None
    await propose(ctx, record, proposal, Step.RENT_CHANGED)


def _new_settings(old: RoundSettings, event: ChangeRent) -> RoundSettings:
    """The agreed settings with the new total, checked as any round's would be."""
    money = check_rent(event.rent, old.currency, event.locale)
    if money.currency != old.currency:
        raise InvalidSetup(
            f"the agreement is in {old.currency}; give the new total in {old.currency}, "
            f"e.g. /newrent {shown(old.rent, old.currency, event.locale)}"
        )
    if money.minor == old.rent:
        raise InvalidSetup(
            f"the total is {shown(old.rent, old.currency, event.locale)} already; nothing changed"
        )
    return check_settings(replace(old, rent=money.minor), event.locale)


def _repriced(
    previous: RoundRecord, agreement: AgreementFacts, settings: RoundSettings, locale: str
) -> RepricedProposal:
    """The agreed split with the change spread equally over the let rooms."""
    prices = [0] * len(agreement.rooms)
    for line in agreement.lines:
        prices[line.room_index] = line.price
    empty = tuple(agreement.rooms.index(room) for room in agreement.empty_rooms)
    for room, price in zip(empty, agreement.empty_prices, strict=True):
        prices[room] = price
    let = [line.room_index for line in agreement.lines]
    try:
        spread = spread_change(prices, let, settings.room_rent(len(let)), settings.floor)
    except BelowFloor as low:
        raise InvalidSetup(
            f"at {shown(settings.rent, settings.currency, locale)}, {agreement.rooms[low.room]}"
            f" would cost {shown(low.price, settings.currency, locale)}, below the lowest price "
            f"per room of {shown(low.lowest, settings.currency, locale)}; start a fresh round "
            "instead with /again, then /adjust rent with the new total"
        ) from low
    except InvalidProblem as exc:
        raise InvalidSetup(f"this agreement cannot be re-priced: {exc}") from exc
    return RepricedProposal(
        assignment={str(line.user_id): line.room_index for line in agreement.lines},
        prices=spread.prices,
        # each member's supporting answer, at the agreed (earlier) prices
        evidence=tuple(
            Evidence(str(line.user_id), line.room_index, line.evidence_prices, "earlier")
            for line in agreement.lines
        ),
        envy_bound=agreement.envy_bound + (1 if spread.uneven else 0),
        mesh=1,
        empty_rooms=empty,
        previous_round=previous.id,
        previous_rent=agreement.rent,
        previous_settled_at=agreement.settled_at,
    )


async def still_repriced(ctx: Context, record: RoundRecord) -> bool:
    """The round is still at its re-priced proposal (no objection has replaced it)."""
    return record.walk_json is not None and isinstance(await ctx.search(record), RepricedSearch)


async def object_with_room(
    ctx: Context, record: RoundRecord, actor: Actor, ref: str, room: int
) -> None:
    """A member would rather take ``room`` at the re-priced prices: ask questions again.

    The objection is an answer ("at these prices I would take that room"), so the fresh
    search starts with it, as an objection in any round would go on from it.
    """
    members = await ctx.tx.members(record.id)
    me = require_member(members, actor)
    proposal = (await ctx.search(record)).proposal()
    if record.phase is not Phase.PROPOSED or ref != str(record.proposal_no) or proposal is None:
        raise StaleAction("that proposal has been replaced or closed; use the latest one")
    if me.accepted_at is not None:
        raise StaleAction("you have already accepted this proposal; it can no longer be objected")
    if room == proposal.assignment[str(actor.user_id)]:
        raise StaleAction("that is the room proposed for you; name the room you would rather take")
    s = record.settings
    earlier = {str(actor.user_id): [(proposal.prices, room)]}
    try:
        search = await asyncio.to_thread(
            start,
            s.problem([str(m.user_id) for m in members]),
            method=s.method,
            options=Options(look_ahead=ctx.config.look_ahead) if s.method == "walk" else None,
            earlier=earlier,
            rough_values=rough_values.matrix(record, members) if s.method == "parallel" else None,
        )
    except (InvalidProblem, InvalidAnswer) as exc:
        raise StaleAction(f"that objection cannot be used: {exc}") from exc
    current = await uphold_objection(ctx, record, actor, tuple(proposal.prices), room)
    await start_search(ctx, current, search)
