"""Persistence: SQLModel tables, repositories (all SQL lives here), unit of work, audit chain."""
