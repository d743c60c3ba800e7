//! `shardlog lookups list|add|rename|retire|restore`: the lists a lab keeps itself (causes,
//! origin types, custody events, case statuses). A code never changes once made, since
//! records hold it; its label may. A retired entry leaves the pick-lists of new work and
//! stays on the records that hold it. Every change is audited.

use super::records::{edge_stamp, open, open_to_read};
use super::{pad_right_with_gap, CliError, Context};
use crate::store::{LookupEntry, LookupKind, Store, StoreError};
use shardlog_core::text::sanitize_for_terminal;

#[derive(Debug, clap::Args)]
pub struct LookupsArgs {
    #[command(subcommand)]
    pub command: LookupsCommand,
}

/// The lists that can be changed, by the names people use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ListName {
    /// Cause categories.
    Cause,
    /// Origin types (what the fracture started from).
    OriginType,
    /// Chain-of-custody events.
    CustodyEvent,
    /// Case statuses.
    Status,
    /// How a mirror boundary was viewed (reflected light, stereo microscope…).
    ViewingMode,
}

impl ListName {
    const ALL: [ListName; 5] = [
        ListName::Cause,
        ListName::OriginType,
        ListName::CustodyEvent,
        ListName::Status,
        ListName::ViewingMode,
    ];

    fn kind(self) -> LookupKind {
        match self {
            ListName::Cause => LookupKind::CauseCategory,
            ListName::OriginType => LookupKind::OriginType,
            ListName::CustodyEvent => LookupKind::CustodyAction,
            ListName::Status => LookupKind::Status,
            ListName::ViewingMode => LookupKind::ViewingMode,
        }
    }

    fn name(self) -> &'static str {
        match self {
            ListName::Cause => "cause",
            ListName::OriginType => "origin-type",
            ListName::CustodyEvent => "custody-event",
            ListName::Status => "status",
            ListName::ViewingMode => "viewing-mode",
        }
    }
}

#[derive(Debug, clap::Subcommand)]
pub enum LookupsCommand {
    /// Show a list (or all five): code, label, and whether it is retired.
    List {
        #[arg(value_enum, value_name = "LIST")]
        list: Option<ListName>,
        /// Print JSON (kind, code, label, sort_order, note, retired) instead of a table.
        #[arg(long)]
        json: bool,
    },
    /// Add an entry at the end of a list. The code is kept for good; choose it with care.
    Add {
        #[arg(value_enum, value_name = "LIST")]
        list: ListName,
        /// The code records will hold (e.g. sealant_attack).
        code: String,
        /// What people read (e.g. "sealant attack on the edge").
        label: String,
    },
    /// Give an entry a new label; its code and the records that hold it stay.
    Rename {
        #[arg(value_enum, value_name = "LIST")]
        list: ListName,
        code: String,
        label: String,
    },
    /// Hide an entry from the pick-lists of new work; records that hold it keep it.
    Retire {
        #[arg(value_enum, value_name = "LIST")]
        list: ListName,
        code: String,
    },
    /// Offer a retired entry again.
    Restore {
        #[arg(value_enum, value_name = "LIST")]
        list: ListName,
        code: String,
    },
}

/// A refusal of what the user typed is a usage error; anything else a failure of the work.
fn refused(e: StoreError) -> CliError {
    match e {
        StoreError::Invalid { .. } | StoreError::Duplicate { .. } => CliError::usage(e.to_string()),
        other => CliError::work(other.to_string()),
    }
}

pub fn run(args: LookupsArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let stamp = edge_stamp();
    let (verb, entry) = match args.command {
        LookupsCommand::List { list, json } => return list_entries(list, json, ctx),
        LookupsCommand::Add { list, code, label } => {
            let mut store = open(&ctx.db)?;
            let e = store
                .add_lookup(list.kind(), &code, &label, &stamp)
                .map_err(refused)?;
            ("added", e)
        }
        LookupsCommand::Rename { list, code, label } => {
            let mut store = open(&ctx.db)?;
            known_code(&store, list, &code)?;
            let e = store
                .rename_lookup(list.kind(), &code, &label, &stamp)
                .map_err(refused)?;
            ("renamed", e)
        }
        LookupsCommand::Retire { list, code } => {
            let mut store = open(&ctx.db)?;
            known_code(&store, list, &code)?;
            let e = store
                .retire_lookup(list.kind(), &code, &stamp)
                .map_err(refused)?;
            ("retired", e)
        }
        LookupsCommand::Restore { list, code } => {
            let mut store = open(&ctx.db)?;
            known_code(&store, list, &code)?;
            let e = store
                .restore_lookup(list.kind(), &code, &stamp)
                .map_err(refused)?;
            ("restored", e)
        }
    };
    writeln!(
        ctx.out,
        "{verb} {} {}: {}{}",
        entry.kind.as_str(),
        sanitize_for_terminal(&entry.code, false),
        sanitize_for_terminal(&entry.label, false),
        if entry.retired { " (retired)" } else { "" }
    )?;
    Ok(())
}

/// A code the list holds, else a usage error that lists the list's codes with their labels.
fn known_code(store: &Store, list: ListName, code: &str) -> Result<(), CliError> {
    let entries = store
        .lookups(list.kind())
        .map_err(|e| CliError::work(e.to_string()))?;
    if entries.iter().any(|e| e.code == code) {
        return Ok(());
    }
    let mut msg = format!(
        "{}: no code \"{}\"; the codes are (the code, not the label, names an entry):",
        list.name(),
        sanitize_for_terminal(code, false)
    );
    for e in &entries {
        msg.push_str(&format!("\n  {}", row(e)));
    }
    Err(CliError::usage(msg))
}

fn row(e: &LookupEntry) -> String {
    format!(
        "{}{}{}",
        pad_right_with_gap(&sanitize_for_terminal(&e.code, false), 24),
        sanitize_for_terminal(&e.label, false),
        if e.retired { "  (retired)" } else { "" }
    )
}

fn list_entries(list: Option<ListName>, json: bool, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let store = open_to_read(&ctx.db)?;
    let lists = match list {
        Some(l) => vec![l],
        None => ListName::ALL.to_vec(),
    };
    if json {
        let mut all = Vec::new();
        for l in &lists {
            all.extend(
                store
                    .lookups(l.kind())
                    .map_err(|e| CliError::work(e.to_string()))?
                    .into_iter()
                    .map(|e| {
                        serde_json::json!({
                            "kind": e.kind.as_str(),
                            "code": e.code,
                            "label": e.label,
                            "sort_order": e.sort_order,
                            "note": e.note,
                            "retired": e.retired,
                        })
                    }),
            );
        }
        let text =
            serde_json::to_string_pretty(&all).map_err(|e| CliError::work(format!("json: {e}")))?;
        writeln!(ctx.out, "{text}")?;
        return Ok(());
    }
    for (i, l) in lists.iter().enumerate() {
        if i > 0 {
            writeln!(ctx.out)?;
        }
        writeln!(ctx.out, "{}", l.name())?;
        let entries = store
            .lookups(l.kind())
            .map_err(|e| CliError::work(e.to_string()))?;
        for e in &entries {
            writeln!(ctx.out, "  {}", row(e))?;
        }
    }
    Ok(())
}
