"""The database: tables, sessions and units of work, the repository of plugs and heads, history."""
