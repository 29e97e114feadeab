//! Visit files in: parsing cells and rows with exact positions for every error.
