//! Monte Carlo of a placement (TODO(odds)).
