"""A real SMTP server for the notify tests (Debian python3-aiosmtpd).

It listens on 127.0.0.1, offers STARTTLS (required before AUTH), accepts
AUTH PLAIN and LOGIN for one user, and stores each accepted message as a
file in --maildir. --fail-first N answers the first N DATA commands with a
temporary failure (451) so the client's retry path is exercised.
"""
import argparse
import asyncio
import os
import signal
import ssl
import sys

from aiosmtpd.controller import Controller
from aiosmtpd.smtp import AuthResult


class Handler:
    def __init__(self, maildir, fail_first):
        self.maildir = maildir
        self.fail_left = fail_first
        self.count = 0

    async def handle_DATA(self, server, session, envelope):
        if self.fail_left > 0:
            self.fail_left -= 1
            return "451 4.3.0 temporary failure, try again later"
        self.count += 1
        path = os.path.join(self.maildir, "msg-%04d.eml" % self.count)
        tmp = path + ".tmp"
        with open(tmp, "wb") as f:
            f.write(("X-Envelope-From: %s\r\n" % envelope.mail_from).encode())
            f.write(("X-Envelope-To: %s\r\n" % ",".join(envelope.rcpt_tos)).encode())
            f.write(("X-Auth-User: %s\r\n" % (session.authenticated and session.auth_data.login.decode() or "")).encode())
            f.write(("X-TLS: %s\r\n" % ("yes" if session.ssl else "no")).encode())
            f.write(envelope.original_content)
        os.rename(tmp, path)
        return "250 2.0.0 stored"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--maildir", required=True)
    ap.add_argument("--cert", required=True)
    ap.add_argument("--key", required=True)
    ap.add_argument("--user", required=True)
    ap.add_argument("--password", required=True)
    ap.add_argument("--fail-first", type=int, default=0)
    a = ap.parse_args()

    ctx = ssl.create_default_context(ssl.Purpose.CLIENT_AUTH)
    ctx.load_cert_chain(a.cert, a.key)

    def auth(server, session, envelope, mechanism, auth_data):
        ok = auth_data.login.decode() == a.user and auth_data.password.decode() == a.password
        return AuthResult(success=ok, handled=False, auth_data=auth_data)

    ctl = Controller(
        Handler(a.maildir, a.fail_first),
        hostname="127.0.0.1",
        port=a.port,
        tls_context=ctx,
        require_starttls=True,
        auth_require_tls=True,
        auth_required=True,
        authenticator=auth,
        ready_timeout=10,
    )
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
