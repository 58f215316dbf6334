//! placeholder until the checker lands
