//! What a plugin finds wrong with its input before it runs. `rfsite check` prints these
//! with file:line:column; `rfsite report` stops on the same errors before any plugin runs,
//! so nothing `report` would reject gets past `check`.

use crate::PluginError;

/// Where in the site file a problem lies.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Place {
    /// A key of the plugin's own `[plugins.<id>]` table; dotted for nested tables
    /// (`rule_sets.my-rules.general_fraction`).
    Option(String),
    /// A key of the `[[services]]` entry with this id (`rules`).
    Service {
        /// Service id.
        id: String,
        /// Key in that entry.
        key: String,
    },
    /// A key of the `[[donors]]` entry with this id.
    Donor {
        /// Donor id.
        id: String,
        /// Key in that entry.
        key: String,
    },
}

/// One problem in a plugin's input.
#[derive(Debug, Clone, PartialEq)]
pub struct InputProblem {
    /// Where it is.
    pub place: Place,
    /// What is wrong, in one sentence.
    pub message: String,
    /// How to fix it.
    pub hint: Option<String>,
    /// A warning lets the run go on; an error stops `check` (exit 2) and `report`.
    pub warning: bool,
}

impl InputProblem {
    /// An error at a place.
    pub fn error(place: Place, message: impl Into<String>, hint: Option<String>) -> Self {
        InputProblem {
            place,
            message: message.into(),
            hint,
            warning: false,
        }
    }
    /// A warning at a place.
    pub fn warning(place: Place, message: impl Into<String>, hint: Option<String>) -> Self {
        InputProblem {
            warning: true,
            ..InputProblem::error(place, message, hint)
        }
    }
}

impl From<PluginError> for InputProblem {
    /// A bad option becomes an error at that option; anything else is an error at the
    /// plugin's table.
    fn from(e: PluginError) -> Self {
        match e {
            PluginError::BadOption { key, message } => {
                InputProblem::error(Place::Option(key), message, None)
            }
            other => InputProblem::error(Place::Option(String::new()), other.to_string(), None),
        }
    }
}

/// The problems of an option parse that either succeeds or fails once.
pub fn problems_of<T>(r: Result<T, PluginError>) -> Vec<InputProblem> {
    match r {
        Ok(_) => Vec::new(),
        Err(e) => vec![e.into()],
    }
}
