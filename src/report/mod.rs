//! What people read: text tables of an evaluation and a batch sheet, the
//! columns of the screen's tables (defined once), SVG pictures, and the HTML
//! report of a screen. It renders values it is given and reads no files.

pub mod fit;
pub mod html;
pub mod plot;
pub mod records;
pub mod text;
pub mod uncertainty;

pub use text::{batch_text, evaluation_text, sig, CAUTION};
