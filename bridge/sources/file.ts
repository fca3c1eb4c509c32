import { createReadStream } from 'node:fs';
import { PassThrough, type Readable } from 'node:stream';
import type { ByteSource, SourceState } from './source';

/** A capture file, or stdin for '-'. Ends when the input ends; nothing to reconnect. */
export function openFileSource(path: string): ByteSource {
  const input: Readable = path === '-' ? process.stdin : createReadStream(path);
  const stream = new PassThrough();
  let state: SourceState = 'open';
  let detail: string | undefined = path === '-' ? 'stdin' : path;
  input.on('end', () => {
    state = 'closed';
  });
  input.on('error', (error) => {
    state = 'error';
    detail = error.message.slice(0, 200);
    stream.destroy(error);
  });
  input.pipe(stream);
  return {
    stream,
    state: () => ({ state, detail }),
    async stop() {
      if (state === 'closed') return;
      input.unpipe(stream);
      if (input !== process.stdin) input.destroy();
      else input.pause();
      state = 'closed';
      stream.end();
    },
  };
}
