pub mod check;
pub mod limits;
