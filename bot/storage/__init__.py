"""Databases behind the engine's store port: SQLite (one process) and PostgreSQL (several).

Both share one SQL text (:mod:`bot.storage.sql_transaction`), translated for PostgreSQL by
:mod:`bot.storage.dialect`; :func:`bot.storage.open_store.open_store` picks one from a setting.
"""
