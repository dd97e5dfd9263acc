// Worker thread that finishes printed PDFs (metadata, dates, structure ids)
// off the main thread, so the main thread keeps Chromium's pages busy.
// Plain JavaScript: it registers tsx's loader, then imports the TypeScript.
import { parentPort } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
const { finishPdf } = await import('./metadata.ts');

parentPort.on('message', async ({ id, bytes, metadata }) => {
  try {
    const finished = await finishPdf(bytes, metadata);
    parentPort.postMessage({ id, bytes: finished }, [finished.buffer]);
  } catch (error) {
    parentPort.postMessage({ id, error: error instanceof Error ? error.message : String(error) });
  }
});
