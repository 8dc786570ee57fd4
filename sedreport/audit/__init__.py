"""Committee audit: the register of analysed sessions, rate statistics, control charts."""
