"""Performance at a busy lab's decade: a synthetic database and the benchmark that measures it.

``shape`` fixes how much of everything a scale holds, ``plan``/``plan_loan`` turn it into a
deterministic list of service requests, ``replay`` (the services, one call per action) and
``bulk`` (batched inserts, the same rows and ledger) execute that plan, ``generate`` builds and
caches databases, and ``run`` measures every figure next to its floor. Nothing here is
imported by the services; the CLI imports it only inside the ``bench`` commands.
"""
