import { createWriteStream, type WriteStream } from 'node:fs';
import { once } from 'node:events';

/**
 * Appends lines to a file through one large buffer: millions of rows are written as a
 * few hundred big chunks, and the stream's backpressure is respected.
 */
export class CsvWriter {
  private readonly stream: WriteStream;
  private pending: string[] = [];
  private pendingChars = 0;
  rows = 0;

  constructor(
    readonly path: string,
    header: string,
    private readonly chunkChars = 1 << 20,
  ) {
    this.stream = createWriteStream(path, { encoding: 'utf8' });
    this.pending.push(`${header}\n`);
  }

  line(text: string): void {
    this.pending.push(text, '\n');
    this.pendingChars += text.length + 1;
    this.rows++;
  }

  /** Call between batches of lines: writes the buffer once it is large, waiting if the disk is behind. */
  async flushIfFull(): Promise<void> {
    if (this.pendingChars >= this.chunkChars) await this.flush();
  }

  private async flush(): Promise<void> {
    const chunk = this.pending.join('');
    this.pending = [];
    this.pendingChars = 0;
    if (!this.stream.write(chunk)) await once(this.stream, 'drain');
  }

  async close(): Promise<void> {
    await this.flush();
    this.stream.end();
    await once(this.stream, 'finish');
  }
}
