"""Telegram updates in, engine events out: one small handler per command or button.

Handlers only translate. They never decide anything about a round: they name the actor, pick
an idempotency key from the update, hand the event to :meth:`Runtime.handle` (which commits
before anything is sent) and show refusals where the person will see them.
"""

from __future__ import annotations

import logging

from telegram import Chat, Message, Update, User
from telegram.constants import ChatMemberStatus, ChatType
from telegram.error import TelegramError

from bot.adapter.help_texts import help_text
from bot.adapter.keyboards import group_of_payload, token_of
from bot.adapter.runtime import AnyContext, runtime_of
from bot.adapter.texts import CALLBACK_TEXT_LIMIT, fit, history, pick_locale, refusal
from bot.rounds.errors import InvalidSetup
from bot.rounds.events import (
    Actor,
    BeginAsking,
    Cancel,
    ChangeRent,
    Configure,
    Event,
    Leave,
    MoveGroup,
    NextRound,
    OpenJoining,
    Press,
    Rerun,
    RoughValues,
    ShowMyAnswers,
)
from bot.rounds.messages import Kind, Outgoing, RefusalFacts
from bot.rounds.names import person_name
from bot.rounds.setup_input import (
    SKIP_WORDS,
    SetupInput,
    parse_adjust_line,
    parse_amount_list,
    parse_rent,
    parse_setup_line,
)

log = logging.getLogger(__name__)
GROUP_TYPES = (ChatType.GROUP, ChatType.SUPERGROUP)


def actor_of(user: User, *, is_chat_admin: bool = False) -> Actor:
    name = person_name(" ".join(part for part in (user.first_name, user.last_name) if part))
    return Actor(user.id, name or (user.username or f"member {user.id}"), is_chat_admin)


async def is_chat_admin(context: AnyContext, chat: Chat, user: User) -> bool:
    """Group owner or administrator, asked from Telegram (the bot needs no admin rights)."""
    if chat.type not in GROUP_TYPES:
        return False
    try:
        member = await context.bot.get_chat_member(chat.id, user.id)
    except TelegramError as trouble:
        log.warning("could not check admin rights: %s", trouble)
        return False
    return member.status in (ChatMemberStatus.OWNER, ChatMemberStatus.ADMINISTRATOR)


def update_key(update: Update, step: str = "") -> str:
    return f"u{update.update_id}{':' + step if step else ''}"


async def run_and_report(update: Update, context: AnyContext, *events: Event) -> list[Outgoing]:
    """Run events in order, stop at the first refusal and show it in the chat it came from."""
    runtime = runtime_of(context)
    out: list[Outgoing] = []
    for event in events:
        result = await runtime.handle(event)
        out += result
        refused = [m for m in result if isinstance(m.facts, RefusalFacts)]
        if refused:
            await _reply(update, refusal(refused[0].facts))  # type: ignore[arg-type]
            break
    return out


async def _reply(update: Update, text: str) -> None:
    message = update.effective_message
    if message is not None:
        await message.reply_text(fit(text))


def _group_message(update: Update) -> tuple[Message, Chat, User] | None:
    message, chat, user = update.effective_message, update.effective_chat, update.effective_user
    if message is None or chat is None or user is None:
        return None
    return message, chat, user


async def _group_only(update: Update) -> tuple[Message, Chat, User] | None:
    found = _group_message(update)
    if found is None:
        return None
    if found[1].type not in GROUP_TYPES:
        await _reply(update, "Please send this command in your flat's group chat.")
        return None
    return found


# --- set-up with arguments -------------------------------------------------------------------


async def set_up_round(update: Update, context: AnyContext, setup: SetupInput) -> None:
    """Draft the round and open it for joining, as one admin action."""
    found = _group_message(update)
    if found is None:
        return
    _, chat, user = found
    actor = actor_of(user, is_chat_admin=await is_chat_admin(context, chat, user))
    await run_and_report(
        update,
        context,
        Configure(update_key(update, "set"), chat.id, actor, setup, fresh=True, open_now=True),
        OpenJoining(update_key(update, "open"), chat.id, actor),
    )


async def new_round_with_arguments(update: Update, context: AnyContext) -> None:
    found = await _group_only(update)
    if found is None:
        return
    try:
        setup = parse_setup_line(_arguments(found[0]), runtime_of(context).settings.locale)
    except InvalidSetup as bad:
        await _reply(update, f"Not done: {bad}.")
        return
    await set_up_round(update, context, setup)


def _arguments(message: Message) -> str:
    parts = (message.text or "").split(maxsplit=1)
    return parts[1] if len(parts) > 1 else ""


async def adjust(update: Update, context: AnyContext) -> None:
    """``/adjust rent 1900 EUR; shared 300; not let Box room`` before the questions start."""
    found = await _group_only(update)
    if found is None:
        return
    message, chat, user = found
    try:
        setup = parse_adjust_line(_arguments(message), runtime_of(context).settings.locale)
    except InvalidSetup as bad:
        await _reply(update, f"Not done: {bad}.")
        return
    actor = actor_of(user, is_chat_admin=await is_chat_admin(context, chat, user))
    await run_and_report(update, context, Configure(update_key(update), chat.id, actor, setup))


# --- simple group commands -------------------------------------------------------------------


async def _admin_event(
    update: Update, context: AnyContext, make: type[BeginAsking | Cancel | NextRound]
) -> None:
    found = await _group_only(update)
    if found is None:
        return
    _, chat, user = found
    actor = actor_of(user, is_chat_admin=await is_chat_admin(context, chat, user))
    await run_and_report(update, context, make(update_key(update), chat.id, actor))


async def begin(update: Update, context: AnyContext) -> None:
    await _admin_event(update, context, BeginAsking)


async def cancel_round(update: Update, context: AnyContext) -> None:
    await _admin_event(update, context, Cancel)


async def next_round(update: Update, context: AnyContext) -> None:
    await _admin_event(update, context, NextRound)


async def _rerun(update: Update, context: AnyContext, *, keep_members: bool) -> None:
    found = await _group_only(update)
    if found is None:
        return
    _, chat, user = found
    actor = actor_of(user, is_chat_admin=await is_chat_admin(context, chat, user))
    await run_and_report(
        update,
        context,
        Rerun(update_key(update, "again"), chat.id, actor, keep_members),
        OpenJoining(update_key(update, "open"), chat.id, actor),
    )


async def run_again(update: Update, context: AnyContext) -> None:
    """Same people, same rooms: everyone is carried over."""
    await _rerun(update, context, keep_members=True)


async def changeover(update: Update, context: AnyContext) -> None:
    """Someone moved out or in: same rooms and rent, and whoever lives there now joins."""
    await _rerun(update, context, keep_members=False)


async def new_rent(update: Update, context: AnyContext) -> None:
    """``/newrent 1900.00``: the total changed; the last agreement is re-priced and confirmed."""
    found = await _group_only(update)
    if found is None:
        return
    message, chat, user = found
    locale = runtime_of(context).settings.locale
    typed = _arguments(message).strip()
    if not typed:
        await _reply(update, "Not done: give the new monthly total, e.g. /newrent 1900.00.")
        return
    try:
        rent = parse_rent(typed, locale)
    except InvalidSetup as bad:
        await _reply(update, f"Not done: {bad}.")
        return
    actor = actor_of(user, is_chat_admin=await is_chat_admin(context, chat, user))
    await run_and_report(
        update, context, ChangeRent(update_key(update), chat.id, actor, rent, locale)
    )


async def agreements(update: Update, context: AnyContext) -> None:
    """The group's past agreements (date, total, who took which room)."""
    found = await _group_only(update)
    if found is None:
        return
    runtime = runtime_of(context)
    found_agreements = await runtime.engine.history(found[1].id)
    await _reply(update, history(found_agreements, runtime.settings.locale))


async def leave(update: Update, context: AnyContext) -> None:
    found = await _group_only(update)
    if found is None:
        return
    _, chat, user = found
    await run_and_report(update, context, Leave(update_key(update), chat.id, actor_of(user)))


PRIVATE_TEXT_HELP = (
    "Here I only read rough values per room (for example: 700, 450, 600), and only before "
    "the questions start. Questions come with buttons; /help says the rest."
)


async def private_text(update: Update, context: AnyContext) -> None:
    """A plain message in the private chat: rough values per room (or "skip")."""
    message, chat, user = update.effective_message, update.effective_chat, update.effective_user
    if message is None or chat is None or user is None or chat.type != ChatType.PRIVATE:
        return
    text = message.text or ""
    if not any(c.isdigit() for c in text) and text.strip().casefold() not in SKIP_WORDS:
        await _reply(update, PRIVATE_TEXT_HELP)
        return
    locale = pick_locale(user.language_code, runtime_of(context).settings.locale)
    try:
        amounts = parse_amount_list(text, what="rough value", locale=locale)
    except InvalidSetup as bad:
        await _reply(update, f"Not done: {bad}.")
        return
    await run_and_report(update, context, RoughValues(update_key(update), actor_of(user), amounts))


async def my_answers(update: Update, context: AnyContext) -> None:
    found = await _group_only(update)
    if found is None:
        return
    _, chat, user = found
    out = await runtime_of(context).handle(
        ShowMyAnswers(update_key(update), chat.id, actor_of(user))
    )
    refused = [m.facts for m in out if isinstance(m.facts, RefusalFacts)]
    if refused:
        await _reply(update, refusal(refused[0]))
    elif any(m.kind is Kind.MY_ANSWERS for m in out):
        await _reply(update, f"{actor_of(user).display_name}, I sent your answers privately.")


async def status(update: Update, context: AnyContext) -> None:
    from bot.adapter.texts import board

    found = await _group_only(update)
    if found is None:
        return
    runtime = runtime_of(context)
    facts = await runtime.engine.status(group_id=found[1].id)
    if facts is None:
        await _reply(update, "No round yet. An admin can start one with /newround.")
        return
    await _reply(update, board(facts, runtime.settings.locale))


async def show_help(update: Update, context: AnyContext) -> None:
    message = update.effective_message
    await _reply(update, help_text(_arguments(message) if message is not None else ""))


# --- private chat ----------------------------------------------------------------------------


async def start_private(update: Update, context: AnyContext) -> None:
    """/start (maybe from a deep link): remember the person and send what was waiting."""
    found = _group_message(update)
    if found is None or found[1].type != ChatType.PRIVATE:
        if found is not None:
            await show_help(update, context)
        return
    _, _, user = found
    runtime = runtime_of(context)
    async with runtime.store.transaction() as tx:
        # Telegram may send the same update again: greet and release once per update.
        first_time = not await tx.seen_event(update_key(update))
        if first_time:
            await tx.add_contact(user.id, user.language_code, runtime.clock())
            await tx.mark_event(update_key(update), runtime.clock())
    if not first_time:
        return
    released = await runtime.delivery.release(user.id)
    args = context.args or []
    came_from_round = bool(args) and group_of_payload(args[0]) is not None
    if released:
        text = "Thanks, we are connected. Here is what was waiting for you."
    elif came_from_round:
        text = "Thanks, we are connected. Your questions will arrive here once the round starts."
    else:
        text = "Hello! Add me to your flat's group chat and send /help there to see what I do."
    await _reply(update, text)
    await runtime.delivery.send_soon()


# --- buttons ---------------------------------------------------------------------------------


async def press(update: Update, context: AnyContext) -> None:
    """A button of ours: the engine checks the token and the presser; we always answer."""
    query = update.callback_query
    if query is None:
        return
    token = token_of(query.data)
    if token is None:
        await query.answer("This button is not one of mine, so nothing happened.", show_alert=True)
        return
    runtime = runtime_of(context)
    # Answer as soon as the press is stored (one short transaction), before anything is sent:
    # Telegram gives up on an unanswered press after a few seconds. The sends follow, in the
    # background, so the chat's next update need not wait for them either.
    out = await runtime.record(Press(f"cb{query.id}", actor_of(query.from_user), token))
    refused = [m.facts for m in out if isinstance(m.facts, RefusalFacts)]
    try:
        if refused:
            await query.answer(fit(refusal(refused[0]), CALLBACK_TEXT_LIMIT), show_alert=True)
        else:
            await query.answer(_press_feedback(out))
    finally:
        context.application.create_task(runtime.after_event(out), update=update)


def _press_feedback(out: list[Outgoing]) -> str:
    kinds = {m.kind for m in out}
    if Kind.PROGRESS in kinds:
        return "Saved."
    if Kind.MEMBER_JOINED in kinds:
        return "You are in. Please also open a private chat with me."
    if Kind.CHANGE_PROMPT in kinds:
        return "I sent you a private message: pick the room you meant."
    if Kind.ANSWER_CHANGED in kinds:
        return "Changed and saved."
    if Kind.ROOM_PROMPT in kinds:
        return "I sent you a private message about which room you would rather have."
    if kinds & {Kind.ACCEPTED, Kind.SETTLED}:
        return "Thanks, noted."
    if Kind.EARLIER_CHOSEN in kinds:
        return "Saved. You can change this until the questions start."
    return "Done." if out else "Already done; nothing changed."


async def unknown_button(update: Update, context: AnyContext) -> None:
    if update.callback_query is not None:
        await update.callback_query.answer(
            "This button is not one of mine, so nothing happened.", show_alert=True
        )


# --- chat migration --------------------------------------------------------------------------


async def group_migrated(update: Update, context: AnyContext) -> None:
    """A group became a supergroup: its rounds carry on under the new chat id."""
    message = update.effective_message
    if message is None:
        return
    if message.migrate_to_chat_id is not None:
        old, new = message.chat.id, message.migrate_to_chat_id
    elif message.migrate_from_chat_id is not None:
        old, new = message.migrate_from_chat_id, message.chat.id
    else:
        return
    await runtime_of(context).handle(MoveGroup(f"migrate:{old}:{new}", old, new))
