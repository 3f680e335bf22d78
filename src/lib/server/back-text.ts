/**
 * Reading the text on the back of a print (a lab's imprint, a stamp, a line of handwriting) with
 * tesseract.js and its English data from the npm registry (@tesseract.js-data/eng). Nothing is
 * fetched at run time: in Node tesseract.js loads its engine (tesseract.js-core's wasm) from
 * node_modules, the language data is read from the data package's folder (a local langPath is read
 * from disk, never downloaded), and nothing is cached beside it (cacheMethod 'none'). One reader per
 * process, started on first use and kept: loading the engine and the data takes about a second.
 */
import { createRequire } from 'node:module';
import path from 'node:path';
import { createWorker, OEM, PSM, type Worker } from 'tesseract.js';

const require = createRequire(import.meta.url);

/**
 * Where the English data is: the integer "best" model of the data package, the one the LSTM engine
 * reads (the package's other folder holds the larger legacy-engine data).
 */
export function englishDataPath(): string {
  return path.join(path.dirname(require.resolve('@tesseract.js-data/eng/package.json')), '4.0.0_best_int');
}

/** An init-only engine parameter the typings do not list (tesseract's own, passed as it is). */
const QUIET = { debug_file: '/dev/null' } as unknown as Parameters<typeof createWorker>[3];

let reader: Promise<Worker> | undefined;

function textReader(): Promise<Worker> {
  reader ??= (async () => {
    // the engine's own notes ("Estimating resolution as …") go nowhere: the worker's log is for our lines
    const worker = await createWorker('eng', OEM.LSTM_ONLY, { langPath: englishDataPath(), gzip: true, cacheMethod: 'none' }, QUIET);
    // the page laid out automatically: "sparse text" missed whole stamps on the generated backs
    await worker.setParameters({ tessedit_pageseg_mode: PSM.AUTO });
    return worker;
  })();
  reader.catch(() => (reader = undefined));
  return reader;
}

/** What was read from a back. */
export interface BackReading {
  /** The lines read, tidied (runs of spaces and empty lines dropped); empty when nothing was read. */
  text: string;
  /** tesseract's mean confidence, 0..100. */
  confidence: number;
}

/** Words tesseract reads with less confidence than this are noise on paper (texture, a scratch). */
const MIN_WORD_CONFIDENCE = 45;

/** Reads the text on a back from its scan (JPEG, PNG or TIFF bytes). */
export async function readBackText(image: Buffer): Promise<BackReading> {
  const worker = await textReader();
  const { data } = await worker.recognize(image, {}, { text: true, blocks: true });
  const lines: string[] = [];
  for (const block of data.blocks ?? []) {
    for (const para of block.paragraphs) {
      for (const line of para.lines) {
        const words = line.words.filter((w) => w.confidence >= MIN_WORD_CONFIDENCE && /[\p{L}\p{N}]/u.test(w.text)).map((w) => w.text);
        if (words.length) lines.push(words.join(' '));
      }
    }
  }
  const text = (data.blocks ? lines.join('\n') : data.text).replace(/[ \t]+/g, ' ').replace(/\n\s*\n+/g, '\n').trim();
  return { text, confidence: data.confidence };
}

/** Stops the reader (the worker's shutdown, the benchmark's end). */
export async function closeTextReader(): Promise<void> {
  const r = reader;
  reader = undefined;
  if (r) await (await r).terminate().catch(() => undefined);
}
