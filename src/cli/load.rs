//! Reading a model file and turning it into a checked model, printing diagnostics on failure.
//! (Owned by the front end; filled in with the language work.)
