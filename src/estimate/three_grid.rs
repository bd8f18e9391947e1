//! Three-mesh estimate (Celik et al. 2008).
