//! Whose fault a failure is: the input (exit status 2) or the computation
//! and its outputs (exit status 1). Every error type of the library says so
//! through [`Blamed`]; [`blame_of`] finds it for an error of any type.

use std::error::Error;

/// Whose fault a failure is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Blame {
    /// The model file, an option, an image or a table given is wrong: fix the input.
    Input,
    /// The computation or writing its outputs failed.
    Run,
}

impl Blame {
    /// The command line's exit status: 2 for [`Blame::Input`], 1 for [`Blame::Run`].
    pub fn exit_code(self) -> u8 {
        match self {
            Blame::Input => 2,
            Blame::Run => 1,
        }
    }
}

/// An error that knows whose fault it is.
pub trait Blamed {
    /// Whose fault this error is.
    fn blame(&self) -> Blame;
}

/// Implements [`Blamed`] for the error types whose every variant has one
/// blame, and [`blame_of`] over the same list and the types that blame by
/// variant, so the two cannot drift apart.
macro_rules! library_errors {
    (input: [$($input:ty),+], run: [$($run:ty),+], by_variant: [$($variant:ty),+]) => {
        $(impl Blamed for $input {
            fn blame(&self) -> Blame {
                Blame::Input
            }
        })+
        $(impl Blamed for $run {
            fn blame(&self) -> Blame {
                Blame::Run
            }
        })+

        /// The blame of `e` if it is one of the library's error types.
        pub fn blame_of(e: &(dyn Error + 'static)) -> Option<Blame> {
            $(if let Some(x) = e.downcast_ref::<$input>() {
                return Some(x.blame());
            })+
            $(if let Some(x) = e.downcast_ref::<$run>() {
                return Some(x.blame());
            })+
            $(if let Some(x) = e.downcast_ref::<$variant>() {
                return Some(x.blame());
            })+
            None
        }
    };
}

library_errors!(
    input: [
        crate::model::ModelError,
        crate::render::StyleError,
        crate::run_folder::RunFolderError,
        crate::measure::MeasureError,
        crate::compare::CompareError,
        crate::integrate::CheckpointError,
        crate::fit::FitSetupError,
        crate::sweep::AxisError,
        crate::shard::ShardError,
        crate::phase::DiagramError
    ],
    run: [
        crate::replicates::ReplicateError,
        crate::export::ExportError,
        crate::integrate::ReadBackError
    ],
    by_variant: [crate::WriteError, crate::StepError]
);

impl Blamed for crate::StepError {
    /// A growing model given to a verb for rows of fixed size is the
    /// input's fault; every other step error is the computation's.
    fn blame(&self) -> Blame {
        match self {
            crate::StepError::Growing => Blame::Input,
            _ => Blame::Run,
        }
    }
}

impl Blamed for crate::WriteError {
    fn blame(&self) -> Blame {
        match self {
            crate::WriteError::Style(e) => e.blame(),
            crate::WriteError::Export(e) => e.blame(),
            crate::WriteError::Step(e) => e.blame(),
            crate::WriteError::ReadBack(e) => e.blame(),
            crate::WriteError::Replicates(e) => e.blame(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_picture_option_inside_a_write_error_is_the_input_s_fault() {
        // thiserror's `transparent` hides the inner error from `source()`,
        // so the wrapper itself must pass the blame on.
        let inner =
            crate::render::StyleError::OutOfRange { option: "--width".into(), value: "3".into(), fix: "x".into() };
        let e = crate::WriteError::Style(inner);
        assert_eq!(blame_of(&e), Some(Blame::Input));
        let io = crate::export::ExportError::Io { path: "x".into(), source: std::io::Error::other("disk full") };
        assert_eq!(blame_of(&crate::WriteError::Export(io)), Some(Blame::Run));
        assert_eq!(blame_of(&std::io::Error::other("x")), None);
        assert_eq!(blame_of(&crate::StepError::Growing), Some(Blame::Input));
        let range = crate::phase::DiagramError::Unread("`a` is not read".into());
        assert_eq!(blame_of(&range), Some(Blame::Input));
        assert_eq!(blame_of(&crate::StepError::Stopped { t_min: 1.0 }), Some(Blame::Run));
    }
}
