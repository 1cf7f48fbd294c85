//! ratewell client library (being written).
