/**
 * A server-sent events response (text/event-stream) fed by the item events hub (item-events.ts).
 * One stream lasts a few minutes and then ends; EventSource connects again by itself, so the
 * caller's rights are checked again at least that often.
 */
import type { LiveEvent } from './item-events.ts';

/** How long one stream lasts before the browser connects again. */
const STREAM_MS = 5 * 60 * 1000;
/** A comment line this often keeps proxies from closing a quiet stream and finds a gone client. */
const HEARTBEAT_MS = 25_000;
/** How long the browser waits before connecting again after the stream ended or dropped. */
const RETRY_MS = 3000;

/**
 * Streams events to the browser. `open` starts watching (given the function that sends one
 * event) and resolves to the call that stops it, once changes are listened for; `first` then
 * gives the events sent at once, read after the watching began so that no change falls between.
 */
export async function eventStream(
  request: Request,
  open: (send: (event: LiveEvent) => void) => Promise<() => void>,
  first: () => Promise<LiveEvent[]>,
): Promise<Response> {
  const encoder = new TextEncoder();
  let controller!: ReadableStreamDefaultController<Uint8Array>;
  let closed = false;
  const queued: Uint8Array[] = [];
  const write = (text: string) => {
    if (closed) return;
    const bytes = encoder.encode(text);
    if (controller) controller.enqueue(bytes);
    else queued.push(bytes);
  };
  const send = (event: LiveEvent) => {
    const { kind, ...data } = event;
    write(`event: ${kind}\ndata: ${JSON.stringify(data)}\n\n`);
  };
  const stopWatching = await open(send);
  let heartbeat: NodeJS.Timeout | undefined;
  let lifetime: NodeJS.Timeout | undefined;
  const close = () => {
    if (closed) return;
    closed = true;
    stopWatching();
    clearInterval(heartbeat);
    clearTimeout(lifetime);
    try {
      controller?.close();
    } catch {
      /* already closed by the client */
    }
  };
  let initial: LiveEvent[];
  try {
    initial = await first();
  } catch (err) {
    close();
    throw err;
  }
  request.signal.addEventListener('abort', close);
  const stream = new ReadableStream<Uint8Array>({
    start(c) {
      controller = c;
      c.enqueue(encoder.encode(`retry: ${RETRY_MS}\n\n`));
      for (const e of initial) send(e);
      for (const bytes of queued.splice(0)) c.enqueue(bytes);
      heartbeat = setInterval(() => write(': still here\n\n'), HEARTBEAT_MS);
      lifetime = setTimeout(close, STREAM_MS);
    },
    cancel() {
      close();
    },
  });
  return new Response(stream, { headers: { 'content-type': 'text/event-stream; charset=utf-8', 'cache-control': 'no-store', 'x-accel-buffering': 'no' } });
}
