//! The SQLite store. The rest of the code sees domain types, never rusqlite.
