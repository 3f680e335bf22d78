/**
 * Response bodies that keep pace with the client. Astro's Node adapter copies a response body to
 * the socket chunk by chunk without waiting for the socket to drain, so a slow client downloading
 * a 2 GB export made the server read the whole file into memory ahead of it. Here each request's
 * Node response is noted as the server receives it (Node's documented `http.server.request.start`
 * diagnostics channel, published before the request reaches Astro), and a paced body hands the
 * next chunk on only once the socket has taken the last ones: memory stays flat whatever the size.
 */
import { AsyncLocalStorage } from 'node:async_hooks';
import diagnosticsChannel from 'node:diagnostics_channel';
import type { ServerResponse } from 'node:http';
import type { Readable } from 'node:stream';

const responses = new AsyncLocalStorage<ServerResponse>();
diagnosticsChannel.subscribe('http.server.request.start', (message) => {
  responses.enterWith((message as { response: ServerResponse }).response);
});

/** Resolves once `res` may be written to again (drained), or is gone. */
function writable(res: ServerResponse): Promise<void> {
  if (!res.writableNeedDrain || res.destroyed) return Promise.resolve();
  return new Promise((resolve) => {
    const done = () => {
      res.off('drain', done);
      res.off('close', done);
      resolve();
    };
    res.on('drain', done);
    res.on('close', done);
  });
}

/**
 * A web stream of `source` for a Response body that reads the next chunk only when the client has
 * taken the previous ones. Outside a request the server saw start (a test calling it directly) it
 * is a plain stream of `source`.
 */
export function pacedBody(source: Readable): ReadableStream<Uint8Array> {
  const res = responses.getStore();
  const chunks = source[Symbol.asyncIterator]() as AsyncIterator<Buffer>;
  return new ReadableStream<Uint8Array>(
    {
      async pull(controller) {
        if (res) await writable(res);
        const { value, done } = await chunks.next();
        if (done) controller.close();
        else controller.enqueue(new Uint8Array(value.buffer, value.byteOffset, value.length));
      },
      cancel() {
        source.destroy();
      },
    },
    { highWaterMark: 0 },
  );
}
