//! Name resolution and the checks of spec §5: syntax tree -> [`super::Model`].
