/**
 * Demo content: two batches of synthetic faded prints for the Hartigan archive (scenes, names,
 * places and dates invented for the demo, pixels made by src/lib/demo/synthetic.ts), taken in
 * through the same ingest service as a web upload, so the worker processes them after `npm start`.
 */
import { Readable } from 'node:stream';
import { Archive, Batch, Membership, User } from '../index.ts';
import { AGEING_MODELS, syntheticScan, type Ageing } from '../../src/lib/demo/synthetic.ts';
import { createBatch } from '../../src/lib/server/batches.ts';
import { ingestScan } from '../../src/lib/server/ingest.ts';
import { stopQueue } from '../../src/lib/server/queue.ts';
import { DEMO_ARCHIVE, DEMO_USERS } from './demo.ts';

interface DemoPrint {
  name: string;
  seed: number;
  ageing: Ageing;
  border?: boolean;
  monochrome?: boolean;
  format?: 'jpeg' | 'png' | 'tiff';
}

/** 1800 x 1200: a 6 x 4 in print at 300 dpi, big enough to look at, quick to make. */
const SIZE = { width: 1800, height: 1200 };

const DEMO_BATCHES: { by: string; batch: { name: string; sourceKind: 'box' | 'album'; sourceLabel: string; dateFrom: string; dateTo: string; notes: string }; prints: DemoPrint[] }[] = [
  {
    by: 'ines@hartigan.example',
    batch: {
      name: 'Hall cupboard shoebox, 1978–1983',
      sourceKind: 'box',
      sourceLabel: "Shoebox marked 'Lowmere' in pencil, hall cupboard, top shelf",
      dateFrom: '1978',
      dateTo: '1983',
      notes: 'Mostly holiday prints from the pier and the allotment. Kept in the dark for forty years: expect cyan loss and yellowed borders.',
    },
    prints: [
      { name: 'shoebox/HC-001.jpg', seed: 11, ageing: AGEING_MODELS.darkStorage(1), border: true },
      { name: 'shoebox/HC-002.jpg', seed: 12, ageing: AGEING_MODELS.darkStorage(0.8), border: true },
      { name: 'shoebox/HC-003.jpg', seed: 13, ageing: AGEING_MODELS.darkStorage(0.6), border: true },
      { name: 'shoebox/HC-004.jpg', seed: 14, ageing: AGEING_MODELS.darkStorage(0.9) },
      { name: 'shoebox/HC-005.jpg', seed: 15, ageing: AGEING_MODELS.darkStorage(0.4), border: true },
      { name: 'shoebox/HC-006.jpg', seed: 16, ageing: AGEING_MODELS.none(), border: true },
      { name: 'shoebox/HC-007.jpg', seed: 17, ageing: AGEING_MODELS.darkStorage(1) },
      { name: 'shoebox/HC-008.tif', seed: 18, ageing: AGEING_MODELS.darkStorage(0.7), border: true, format: 'tiff' },
      { name: 'shoebox/HC-009.jpg', seed: 19, ageing: AGEING_MODELS.yellowedMonochrome(0.8), border: true, monochrome: true },
      { name: 'shoebox/HC-010.jpg', seed: 20, ageing: AGEING_MODELS.darkStorage(0.85), border: true },
      { name: 'shoebox/HC-011.jpg', seed: 21, ageing: AGEING_MODELS.darkStorage(0.3) },
      { name: 'shoebox/HC-012.png', seed: 22, ageing: AGEING_MODELS.darkStorage(1), border: true, format: 'png' },
    ],
  },
  {
    by: 'rafe@hartigan.example',
    batch: {
      name: 'Green album, loose prints',
      sourceKind: 'album',
      sourceLabel: 'Green cloth album from the front room, prints that had come unstuck',
      dateFrom: '1981~',
      dateTo: '1986~',
      notes: 'These hung in the sun on the landing for years before they went into the album.',
    },
    prints: [
      { name: 'GA-01.jpg', seed: 31, ageing: AGEING_MODELS.lightFaded(1), border: true },
      { name: 'GA-02.jpg', seed: 32, ageing: AGEING_MODELS.lightFaded(0.7), border: true },
      { name: 'GA-03.jpg', seed: 33, ageing: AGEING_MODELS.lightFaded(0.5) },
      { name: 'GA-04.jpg', seed: 34, ageing: AGEING_MODELS.lightFaded(0.9), border: true },
      { name: 'GA-05.jpg', seed: 35, ageing: AGEING_MODELS.none() },
      { name: 'GA-06.jpg', seed: 36, ageing: AGEING_MODELS.lightFaded(0.8) },
      { name: 'GA-07.jpg', seed: 37, ageing: AGEING_MODELS.yellowedMonochrome(1), border: true, monochrome: true },
      { name: 'GA-08.jpg', seed: 38, ageing: AGEING_MODELS.lightFaded(0.6), border: true },
      { name: 'GA-09.jpg', seed: 39, ageing: AGEING_MODELS.lightFaded(1) },
      { name: 'GA-10.jpg', seed: 40, ageing: AGEING_MODELS.lightFaded(0.4), border: true },
    ],
  },
];

/** Adds the demo batches to the Hartigan archive (skipping any batch that already exists). */
export async function seedDemoBatches(): Promise<void> {
  const archive = await Archive.findOne({ where: { slug: DEMO_ARCHIVE.slug } });
  if (!archive) return;
  try {
    for (const demo of DEMO_BATCHES) {
      if (await Batch.findOne({ where: { archiveId: archive.id, name: demo.batch.name } })) continue;
      const user = await User.findOne({ where: { email: demo.by } });
      const member = user ? await Membership.findOne({ where: { archiveId: archive.id, userId: user.id } }) : null;
      if (!user || !member || !DEMO_USERS.some((u) => u.email === demo.by)) continue;
      const batch = await createBatch(archive.id, user.id, demo.batch);
      for (const p of demo.prints) {
        const bytes = await syntheticScan({ ...SIZE, seed: p.seed, ageing: p.ageing, border: p.border, monochrome: p.monochrome, format: p.format ?? 'jpeg', quality: 92 });
        await ingestScan({ archiveId: archive.id, batchId: batch.id, userId: user.id, name: p.name, body: Readable.from([bytes]) });
      }
    }
  } finally {
    // The seed runs inside `npm start` before the worker: let go of the queue's connections.
    await stopQueue();
  }
}
