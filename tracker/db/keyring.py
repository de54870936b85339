"""The keys unlocked in this process, and where its events say they come from.

An entry point unlocks a key (the command line asks for the passphrase, the interface
asks once when an operator is chosen) and puts the signer here; a unit of work takes the
signer of its operator's registered key from its database's keyring. Services therefore
never ask anyone for anything: they find a signer or refuse. Unlocked keys live in this
process's memory only; :meth:`Keyring.forget` locks them again (the interface does so
after its idle time).

The demo and the benchmark use keyrings of their own, holding invented keys, and the demo
says its events come from an invented user and host, so its ledger is the same on every
machine.
"""

from __future__ import annotations

import getpass
import socket
import threading
from dataclasses import dataclass, field

from tracker.domain.signing import Signer


def this_machine() -> tuple[str, str]:
    """The operating-system user running tracker and the computer's host name."""
    try:
        user = getpass.getuser()
    except (KeyError, OSError):  # no name for this uid (a bare container)
        user = ""
    return user, socket.gethostname()


@dataclass
class Keyring:
    """Unlocked signers by key ID (memory only), and the OS user and host events record."""

    signers: dict[str, Signer] = field(default_factory=dict, repr=False)
    machine: tuple[str, str] | None = None  # None: this process's own user and host
    _lock: threading.Lock = field(default_factory=threading.Lock, repr=False)

    def add(self, signer: Signer) -> None:
        with self._lock:
            self.signers[signer.key_id] = signer

    def get(self, key_id: str) -> Signer | None:
        with self._lock:
            return self.signers.get(key_id)

    def forget(self, *key_ids: str) -> None:
        """Lock these keys again (all of them when none is named)."""
        with self._lock:
            if not key_ids:
                self.signers.clear()
            for key in key_ids:
                self.signers.pop(key, None)

    def user_and_host(self) -> tuple[str, str]:
        return self.machine if self.machine is not None else this_machine()


PROCESS = Keyring()  # the keys this process's person unlocked
