"""A plain SMTP server for the reliability tests (Debian python3-aiosmtpd).

It listens on 127.0.0.1:--port without TLS or authentication (the daemon
under test is configured with starttls: off, auth: none, which it allows
on loopback only) and stores each accepted message as msg-NNNN.eml in
--maildir, written to a temporary name first and renamed, so a reader
never sees half a message. --fail-first N answers the first N DATA
commands with a temporary failure (451).
"""
import argparse
import asyncio
import os
import signal
import sys

from aiosmtpd.controller import Controller


class Handler:
    def __init__(self, maildir, fail_first):
        self.maildir = maildir
        self.fail_left = fail_first
        self.count = len([f for f in os.listdir(maildir) if f.endswith(".eml")])

    async def handle_DATA(self, server, session, envelope):
        if self.fail_left > 0:
            self.fail_left -= 1
            return "451 4.3.0 temporary failure, try again later"
        self.count += 1
        path = os.path.join(self.maildir, "msg-%04d.eml" % self.count)
        with open(path + ".tmp", "wb") as f:
            f.write(envelope.original_content)
        os.rename(path + ".tmp", path)
        return "250 2.0.0 stored"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--maildir", required=True)
    ap.add_argument("--fail-first", type=int, default=0)
    a = ap.parse_args()
    ctl = Controller(Handler(a.maildir, a.fail_first), hostname="127.0.0.1", port=a.port, ready_timeout=10)
    ctl.start()
    print("READY", flush=True)
    stop = asyncio.Event()
    loop = asyncio.new_event_loop()
    for s in (signal.SIGTERM, signal.SIGINT):
        loop.add_signal_handler(s, stop.set)
    loop.run_until_complete(stop.wait())
    ctl.stop()


if __name__ == "__main__":
    sys.exit(main())
