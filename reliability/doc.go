// Package reliability holds the reliability and security proof of
// risewatch, run by `make test` in bounded time on loopback only:
//
//   - soak: a simulated campus of 10,000 BACnet terminals polled through the
//     real client, assembler, evidence engine and rules; resident memory must
//     stay flat after warm-up, every sweep must read every point, and the
//     figures (RSS per terminal, sweep time, CPU per point) are printed;
//   - faults: devices that are silent, slow, answer Error, Reject or Abort, or
//     send malformed and duplicated packets, while the healthy ones keep
//     being read; the daemon (`risewatch run` as a child process) through
//     InfluxDB and SMTP outages, a full data directory and kill -9, after
//     which nothing is lost and no e-mail is sent twice;
//   - bad input: absurd sensor values through assembler → engine → rules
//     never open a fault other than data-quality;
//   - security: the daemon refuses to listen off loopback without
//     credentials.
//
// The campus helpers (StartCampus, Campus.SiteYAML) can drive any other
// scale test.
package reliability
