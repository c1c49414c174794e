//! `heft nodes`: what the loaded plugins offer.

use std::process::ExitCode;

use heft_runtime::node_docs::{describe_type, list};
use heft_runtime::registry::{Registry, closest};

pub fn nodes(registry: &Registry, node_type: Option<&str>) -> ExitCode {
    match node_type {
        None => {
            print!("{}", list(registry));
            ExitCode::SUCCESS
        }
        Some(name) => match registry.lookup(name) {
            Ok(Some(t)) => {
                print!("{}", describe_type(t));
                ExitCode::SUCCESS
            }
            Ok(None) => {
                eprintln!("error: unknown node type `{name}`");
                if let Some(c) = closest(name, registry.type_names()) {
                    eprintln!("help: did you mean `{c}`?");
                } else {
                    eprintln!("help: `heft nodes` lists the node types found");
                }
                ExitCode::from(1)
            }
            Err(many) => {
                eprintln!("error: node type `{name}` is offered by more than one plugin:");
                for t in many {
                    eprintln!("  {}", t.origin());
                }
                ExitCode::from(1)
            }
        },
    }
}
