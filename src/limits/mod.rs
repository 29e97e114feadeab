//! Published limits and the rules that apply them. Pure: no SQL, no I/O.
