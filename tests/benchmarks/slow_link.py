"""A slow network link on one machine: a TCP relay that delivers every byte a fixed time
after it arrived, each way, for the load benchmark's ``--latency`` (benches in one
building, the server in another, or over a VPN).

The relay runs an asyncio loop in a thread of its own. Per connection and direction, one
task reads what arrives and stamps it with when it is due, another writes it out then,
in order; so the link adds its delay without holding a second message back for the first
one's delay (a real link carries several messages in flight). Not part of the test suite.
"""

from __future__ import annotations

import asyncio
import threading
import time
from typing import Any


class SlowLink:
    """Relay 127.0.0.1:``port`` to ``host``:``target_port``, ``delay_s`` each way."""

    def __init__(self, host: str, target_port: int, delay_s: float) -> None:
        self.host, self.target_port, self.delay_s = host, target_port, delay_s
        self.port = 0
        self._loop = asyncio.new_event_loop()
        self._ready = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def __enter__(self) -> SlowLink:
        self._thread.start()
        if not self._ready.wait(10):
            raise RuntimeError("the slow link did not start")
        return self

    def __exit__(self, *_exc: Any) -> None:
        self._loop.call_soon_threadsafe(self._loop.stop)
        self._thread.join(10)

    def _run(self) -> None:
        asyncio.set_event_loop(self._loop)
        server = self._loop.run_until_complete(
            asyncio.start_server(self._connection, "127.0.0.1", 0))
        self.port = server.sockets[0].getsockname()[1]
        self._ready.set()
        self._loop.run_forever()
        server.close()

    async def _connection(self, reader: asyncio.StreamReader,
                          writer: asyncio.StreamWriter) -> None:
        up_reader, up_writer = await asyncio.open_connection(self.host, self.target_port)
        await asyncio.gather(self._carry(reader, up_writer), self._carry(up_reader, writer),
                             return_exceptions=True)

    async def _carry(self, source: asyncio.StreamReader, sink: asyncio.StreamWriter) -> None:
        queue: asyncio.Queue[tuple[float, bytes]] = asyncio.Queue()

        async def deliver() -> None:
            while True:
                due, data = await queue.get()
                if not data:
                    break
                wait = due - time.monotonic()
                if wait > 0:
                    await asyncio.sleep(wait)
                sink.write(data)
                await sink.drain()
            sink.close()

        delivering = asyncio.create_task(deliver())
        try:
            while data := await source.read(65536):
                queue.put_nowait((time.monotonic() + self.delay_s, data))
        finally:
            queue.put_nowait((0.0, b""))  # the other side closed: close this one after
            await delivering
