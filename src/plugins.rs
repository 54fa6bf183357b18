//! `rfsite plugins [SITE] [--json]`

use rfsite_engine::Registry;

use crate::Outcome;

/// Arguments of `plugins`.
#[derive(clap::Args)]
pub struct Args {
    /// Print JSON.
    #[arg(long)]
    pub json: bool,
}

/// Runs `plugins`.
pub fn run(a: Args) -> Outcome {
    let reg = Registry::builtin();
    let ordered = match reg.ordered() {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::Failed;
        }
    };
    if a.json {
        let v: Vec<_> = ordered
            .iter()
            .map(|p| serde_json::json!({"id": p.id(), "version": p.version(), "kind": reg.kind_of(p.id()), "after": p.after(), "method": p.method()}))
            .collect();
        println!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        return Outcome::Ok;
    }
    for (i, p) in ordered.iter().enumerate() {
        let m = p.method();
        println!("{}. {} {} ({})", i + 1, p.id(), p.version(), reg.kind_of(p.id()));
        println!("   {}", m.summary);
        for c in m.citations {
            println!("   source: {c}");
        }
        println!("   validity: {}", m.validity);
        if !p.after().is_empty() {
            println!("   runs after: {}", p.after().join(", "));
        }
    }
    Outcome::Ok
}
