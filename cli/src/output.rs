//! Writing outputs atomically. For now the temporary-file registry lives in the library
//! (the field writer registers its temporary there); it moves here with the point sinks.
pub use meshbound::output::*;
