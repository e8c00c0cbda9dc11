//! The window around the screens: the top bar and rail, the study picker that opens a
//! study, signing in as a reviewer, and the key list.

pub mod key_help;
pub mod shell;
pub mod sign_in;
pub mod study_picker;
