/**
 * Reads a server-sent events stream over HTTP the way EventSource does (text/event-stream:
 * `event:` and `data:` lines, a blank line ends an event), collecting the events as they arrive.
 */
import { BASE } from './http.ts';

export interface StreamEvent {
  event: string;
  data: any;
}

export interface OpenStream {
  status: number;
  contentType: string;
  /** The events received so far, in order. */
  events: StreamEvent[];
  /** The body of a refused request (not a stream). */
  refusal: string;
  close(): void;
}

/** Opens `path` with an API token and keeps reading it in the background until `close()`. */
export async function openEvents(path: string, token: string, base = BASE): Promise<OpenStream> {
  const abort = new AbortController();
  const res = await fetch(base + path, { headers: { accept: 'text/event-stream', authorization: `Bearer ${token}` }, signal: abort.signal });
  const contentType = res.headers.get('content-type') ?? '';
  const stream: OpenStream = { status: res.status, contentType, events: [], refusal: '', close: () => abort.abort() };
  if (!res.ok || !contentType.startsWith('text/event-stream')) {
    stream.refusal = await res.text();
    return stream;
  }
  const reader = res.body!.pipeThrough(new TextDecoderStream()).getReader();
  void (async () => {
    let buffer = '';
    try {
      for (;;) {
        const { value, done } = await reader.read();
        if (done) return;
        buffer += value;
        let end: number;
        while ((end = buffer.indexOf('\n\n')) >= 0) {
          const block = buffer.slice(0, end);
          buffer = buffer.slice(end + 2);
          let event = 'message';
          const data: string[] = [];
          for (const line of block.split('\n')) {
            if (line.startsWith('event:')) event = line.slice(6).trim();
            else if (line.startsWith('data:')) data.push(line.slice(5).trimStart());
          }
          if (data.length) stream.events.push({ event, data: JSON.parse(data.join('\n')) });
        }
      }
    } catch {
      /* closed */
    }
  })();
  return stream;
}
