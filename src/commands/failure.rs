//! Why a command failed, and so its exit status.

use crate::input::diagnostic::InputError;
use crate::output::emit::EmitError;

/// Why a command failed, and so its exit status.
#[derive(Debug)]
pub enum Failure {
    /// Bad input: exit 2.
    Input(InputError),
    /// A usage or output problem the user must fix: exit 2.
    Usage(String),
    /// The register-level check contradicts the model: an internal error,
    /// exit 3, nothing written.
    Internal(String),
}

impl From<InputError> for Failure {
    fn from(e: InputError) -> Failure {
        Failure::Input(e)
    }
}

impl From<EmitError> for Failure {
    fn from(e: EmitError) -> Failure {
        Failure::Usage(e.to_string())
    }
}
