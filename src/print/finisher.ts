/**
 * PDF finishing (src/print/metadata.ts) in a worker thread: the main
 * thread only drives Chromium's pages, so a page is never kept waiting
 * while another statement's PDF is rewritten.
 */
import { Worker } from 'node:worker_threads';
import { type PdfMetadata, finishPdf } from './metadata.ts';

export interface PdfFinisher {
  finish(bytes: Uint8Array, metadata: PdfMetadata): Promise<Uint8Array>;
  close(): Promise<void>;
}

/** Finishes PDFs in one worker thread; falls back to the main thread if the worker cannot start. */
export function startFinisher(): PdfFinisher {
  let worker: Worker;
  try {
    worker = new Worker(new URL('./finish-worker.js', import.meta.url));
  } catch {
    return { finish: finishPdf, close: async () => {} };
  }
  worker.unref();
  let next = 0;
  const pending = new Map<number, { resolve: (bytes: Uint8Array) => void; reject: (error: Error) => void }>();
  const failAll = (error: Error): void => {
    for (const { reject } of pending.values()) reject(error);
    pending.clear();
  };
  worker.on('message', (message: { id: number; bytes?: Uint8Array; error?: string }) => {
    const waiting = pending.get(message.id);
    if (!waiting) return;
    pending.delete(message.id);
    if (message.bytes) waiting.resolve(new Uint8Array(message.bytes));
    else waiting.reject(new Error(`finishing the PDF failed: ${message.error ?? 'unknown error'}`));
  });
  worker.on('error', (error) => failAll(error));
  worker.on('exit', (code) => failAll(new Error(`the PDF finishing thread stopped (exit ${code})`)));
  return {
    finish(bytes, metadata) {
      const id = next++;
      return new Promise((resolve, reject) => {
        pending.set(id, { resolve, reject });
        const copy = bytes.slice();
        worker.postMessage({ id, bytes: copy, metadata }, [copy.buffer]);
      });
    },
    async close() {
      await worker.terminate();
    },
  };
}
