"""Send per-partition work to a Dask cluster (dask.distributed), and add the results there.

:class:`ClusterBlocks` offers the same ``total(fn)`` as an in-memory or streamed catalogue:
each partition (one file) becomes one task that reads its rows on a worker and returns
``fn``'s sums (a few hundred kB for a shear profile, whatever the number of rows); the client
adds them in partition order, as a single process does. Workers read the files themselves: the paths
must be visible to them (a shared file system or the same machine).

Connect with an address (``tcp://host:8786``, what ``dask scheduler`` prints) or pass a
``distributed.Client`` you already hold.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from lensmass.core.errors import LensInputError

#: Seconds to wait for a scheduler before saying it cannot be reached.
CONNECT_TIMEOUT_S = 10


def connect(address_or_client: Any):
    """A ``distributed.Client`` for an address, or the client given; one clear sentence on failure."""
    try:
        from distributed import Client
    except ImportError:
        raise LensInputError("Running on a Dask cluster needs dask.distributed: pip install \"lensmass[distributed]\"."
                             ) from None
    if isinstance(address_or_client, Client):
        return address_or_client
    address = str(address_or_client)
    try:
        return Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise LensInputError(f"Cannot reach the Dask scheduler at '{address}' ({type(exc).__name__}): check the "
                             "address (e.g. tcp://host:8786) and that the scheduler is running.") from None


def ordered_total(futures: list):
    """Add the futures' results on the client, in partition order (the order a single process adds them,
    so both give the same rounding); each result is released once added."""
    if not futures:
        raise LensInputError("There is nothing to add up: the catalogue has no partitions.")
    total = 0
    for i, fut in enumerate(futures):
        total = total + fut.result()
        futures[i] = None
        fut.release()
    return total


class ClusterBlocks:
    """A streamed catalogue (:class:`lensmass.io.catalog_stream.CatalogFiles`) worked on a Dask cluster."""

    def __init__(self, files, client):
        self.files = files
        self.client = connect(client)
        self.n_rows = files.n_rows

    @property
    def address(self) -> str:
        return str(getattr(self.client.scheduler, "address", "") or self.client.scheduler_info().get("address", ""))

    def total(self, fn: Callable, progress: Callable[[float, str], None] | None = None):
        from lensmass.io.catalog_stream import partition_total

        parts = self.files.partitions
        futures = self.client.map(partition_total, [fn] * len(parts), parts, [self.files.block_rows] * len(parts),
                                  pure=False)
        try:
            return ordered_total(futures)
        except LensInputError:
            raise
        except MemoryError:
            raise LensInputError("A Dask worker ran out of memory: give the workers more memory, or split the "
                                 "catalogue into smaller files.") from None
        except (ImportError, RuntimeError, OSError) as exc:  # a worker without lensmass, a lost worker, a path
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            raise LensInputError(f"The Dask cluster could not finish the work ({type(exc).__name__}: {first[:160]}): "
                                 "every worker needs the same lensmass version and must see the catalogue at the "
                                 "same path.") from None
