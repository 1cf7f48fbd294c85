//! C ABI over the ratewell client library (work in progress in this commit: no symbols yet).
