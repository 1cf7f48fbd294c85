//! Python package over the ratewell client library (work in progress in this commit: empty).
