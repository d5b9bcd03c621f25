//! Modified Bessel functions of real order and the Bessel-bridge hitting probability used by the
//! CLE angle process (DESIGN §6.1).
