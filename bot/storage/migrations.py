"""The database schema as an ordered list of versioned migrations.

Each migration runs once, in its own ``BEGIN IMMEDIATE`` transaction together with the row
that records it in ``schema_version``; re-running :func:`pending` against an up-to-date
database yields nothing, so start-up is idempotent. Never edit a released migration: append
a new one.
"""

from __future__ import annotations

from dataclasses import dataclass

OPEN_PHASES_SQL = "('drafting', 'gathering', 'asking', 'proposed')"


@dataclass(frozen=True, slots=True)
class Migration:
    """One schema step: a version number, a name for humans, and its statements."""

    version: int
    name: str
    statements: tuple[str, ...]


SCHEMA_VERSION_TABLE = """
CREATE TABLE IF NOT EXISTS schema_version (
    version    INTEGER PRIMARY KEY,
    name       TEXT NOT NULL,
    applied_at INTEGER NOT NULL
)"""

MIGRATIONS: tuple[Migration, ...] = (
    Migration(
        1,
        "rounds, members, questions, tokens, events, audit, timers",
        (
            """CREATE TABLE rounds (
                id             INTEGER PRIMARY KEY,
                group_id       INTEGER NOT NULL,
                admin_id       INTEGER NOT NULL,
                phase          TEXT NOT NULL CHECK (phase IN ('drafting', 'gathering',
                               'asking', 'proposed', 'settled', 'cancelled', 'lapsed')),
                settings       TEXT NOT NULL,
                walk           TEXT,
                walk_rev       INTEGER NOT NULL DEFAULT 0,
                proposal_no    INTEGER NOT NULL DEFAULT 0,
                previous_round INTEGER REFERENCES rounds(id),
                created_at     INTEGER NOT NULL,
                updated_at     INTEGER NOT NULL
            )""",
            f"""CREATE UNIQUE INDEX rounds_one_open_per_group ON rounds(group_id)
                WHERE phase IN {OPEN_PHASES_SQL}""",
            "CREATE INDEX rounds_by_group ON rounds(group_id, id)",
            """CREATE TABLE members (
                round_id     INTEGER NOT NULL REFERENCES rounds(id),
                user_id      INTEGER NOT NULL,
                display_name TEXT NOT NULL,
                joined_at    INTEGER NOT NULL,
                accepted_at  INTEGER,
                PRIMARY KEY (round_id, user_id)
            )""",
            """CREATE TABLE questions (
                round_id        INTEGER NOT NULL,
                qid             TEXT NOT NULL,
                user_id         INTEGER NOT NULL,
                prices          TEXT NOT NULL,
                choices         TEXT NOT NULL,
                sent_message_id INTEGER,
                asked_at        INTEGER NOT NULL,
                answered_at     INTEGER,
                room            INTEGER,
                PRIMARY KEY (round_id, qid),
                FOREIGN KEY (round_id, user_id) REFERENCES members(round_id, user_id),
                CHECK ((answered_at IS NULL) = (room IS NULL))
            )""",
            """CREATE TABLE tokens (
                token    TEXT PRIMARY KEY,
                round_id INTEGER NOT NULL REFERENCES rounds(id),
                action   TEXT NOT NULL,
                ref      TEXT NOT NULL,
                room     INTEGER
            )""",
            """CREATE TABLE processed_events (
                key          TEXT PRIMARY KEY,
                processed_at INTEGER NOT NULL
            )""",
            """CREATE TABLE audit (
                id       INTEGER PRIMARY KEY,
                round_id INTEGER NOT NULL REFERENCES rounds(id),
                at       INTEGER NOT NULL,
                kind     TEXT NOT NULL,
                user_id  INTEGER,
                detail   TEXT NOT NULL
            )""",
            "CREATE INDEX audit_by_member ON audit(round_id, user_id)",
            """CREATE TABLE timers (
                id       INTEGER PRIMARY KEY,
                round_id INTEGER NOT NULL REFERENCES rounds(id),
                kind     TEXT NOT NULL,
                user_id  INTEGER,
                ref      TEXT NOT NULL,
                due_at   INTEGER NOT NULL,
                fired_at INTEGER
            )""",
            # NULLs are distinct in a UNIQUE constraint (sqlite.org/lang_createtable.html),
            # so round-level timers (no user) are made unique through an expression index.
            """CREATE UNIQUE INDEX timers_once
                ON timers(round_id, kind, COALESCE(user_id, 0), ref)""",
            "CREATE INDEX timers_due ON timers(fired_at, due_at)",
        ),
    ),
    Migration(
        2,
        "outbox of outgoing messages, people who opened a private chat",
        (
            # Written in the same transaction as the event that produced the messages, so a
            # crash between "committed" and "sent" loses nothing: start-up sends what is left.
            """CREATE TABLE outbox (
                id         INTEGER PRIMARY KEY,
                event_key  TEXT NOT NULL,
                seq        INTEGER NOT NULL,
                chat_id    INTEGER NOT NULL,
                round_id   INTEGER,
                kind       TEXT NOT NULL,
                ref        TEXT,
                payload    TEXT NOT NULL,
                state      TEXT NOT NULL DEFAULT 'pending'
                           CHECK (state IN ('pending', 'held', 'sent', 'dropped')),
                message_id INTEGER,
                created_at INTEGER NOT NULL,
                sent_at    INTEGER,
                UNIQUE (event_key, seq)
            )""",
            "CREATE INDEX outbox_by_state ON outbox(state, id)",
            "CREATE INDEX outbox_by_chat ON outbox(chat_id, kind)",
            """CREATE TABLE contacts (
                user_id       INTEGER PRIMARY KEY,
                language_code TEXT,
                opened_at     INTEGER NOT NULL
            )""",
        ),
    ),
    Migration(
        3,
        "members' choice to reuse their answers from the previous round",
        (
            # One row per member who chose; no row means "reuse" (the default at /begin).
            """CREATE TABLE earlier_choices (
                round_id  INTEGER NOT NULL REFERENCES rounds(id),
                user_id   INTEGER NOT NULL,
                keep      INTEGER NOT NULL CHECK (keep IN (0, 1)),
                chosen_at INTEGER NOT NULL,
                PRIMARY KEY (round_id, user_id)
            )""",
        ),
    ),
    Migration(
        4,
        "questions the walk no longer needs (a look-ahead guess that did not come true)",
        ("ALTER TABLE questions ADD COLUMN withdrawn_at INTEGER",),
    ),
    Migration(
        5,
        "outbox claims, so that several bot processes never send the same message twice",
        ("ALTER TABLE outbox ADD COLUMN claimed_at INTEGER",),
    ),
    Migration(
        6,
        "members' optional rough values per room (a soft start for the rounds of questions)",
        ("ALTER TABLE members ADD COLUMN rough_values TEXT",),
    ),
    Migration(
        7,
        "agreements kept as written; rounds whose private answers were deleted",
        (
            # The written agreement's facts (bot.rounds.outbox_codec.encode_facts), stored in
            # the transaction that settles the round: /agreements reads only this, and it
            # outlives the deletion of the round's answers. Rounds settled before this
            # migration have no row; the engine works theirs out from the walk while it lasts.
            """CREATE TABLE agreements (
                round_id  INTEGER PRIMARY KEY REFERENCES rounds(id),
                group_id  INTEGER NOT NULL,
                agreed_at INTEGER NOT NULL,
                facts     TEXT NOT NULL
            )""",
            "CREATE INDEX agreements_by_group ON agreements(group_id, round_id)",
            # Set when the retention policy deleted the round's answers and its walk.
            "ALTER TABLE rounds ADD COLUMN forgotten_at INTEGER",
        ),
    ),
    Migration(
        8,
        "a round's search stored as a snapshot plus the steps applied after it",
        (
            # rounds.walk becomes the snapshot; each answer, closed round or objection
            # appends one row here instead of rewriting the whole search
            # (bot.rounds.search_steps). A search stored whole before this migration is a
            # snapshot with no steps, so it loads as it is.
            """CREATE TABLE search_steps (
                round_id INTEGER NOT NULL REFERENCES rounds(id),
                seq      INTEGER NOT NULL,
                step     TEXT NOT NULL,
                PRIMARY KEY (round_id, seq)
            )""",
        ),
    ),
)


def pending(applied: set[int]) -> list[Migration]:
    """Migrations not yet applied, in order; checks the list itself is well formed."""
    versions = [m.version for m in MIGRATIONS]
    if versions != list(range(1, len(MIGRATIONS) + 1)):
        raise RuntimeError(f"migration versions must be 1..n without gaps, got {versions}")
    unknown = applied - set(versions)
    if unknown:
        raise RuntimeError(
            f"the database has schema versions {sorted(unknown)} this Flatpact does not know; "
            "run a newer release"
        )
    return [m for m in MIGRATIONS if m.version not in applied]
