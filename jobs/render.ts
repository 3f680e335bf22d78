/**
 * The render queue: the full-resolution corrected JPEG (and its small copies) of one correction
 * version, for versions made after the first analysis (batch pooling now, an operator's change
 * later). The files go under renders/<item>/v<version>.jpg, so a retried job overwrites its own
 * output; the item points at the newest rendered version, never back at an older one.
 */
import type PgBoss from 'pg-boss';
import { Op } from 'sequelize';
import { Correction, Item, Original } from '../db/index.ts';
import { correctionSchema } from '../src/lib/restoration/correction.ts';
import { ScanRejected } from '../src/lib/restoration/imaging.ts';
import { uploadLimits } from '../src/lib/server/ingest.ts';
import { derivedKeys, PREVIEW_SIDE, RENDER_QUEUE, THUMBNAIL_SIDE, type RenderJob } from '../src/lib/server/processing.ts';
import { storage } from '../src/lib/server/storage.ts';
import { enginePool } from './engine-pool.ts';
import type { JobHandler } from './registry.ts';

async function renderVersion(job: PgBoss.Job<RenderJob>): Promise<void> {
  const { itemId, version } = job.data;
  const item = (await Item.findByPk(itemId, { include: [{ model: Original, as: 'original' }] })) as (Item & { original: Original }) | null;
  const correction = await Correction.findOne({ where: { itemId, version } });
  if (!item || !correction) return;
  if ((item.renderVersion ?? 0) >= version && item.renderKey) return;

  const store = storage();
  const key = derivedKeys.render(itemId, version);
  try {
    const result = await enginePool().renderCorrected(
      await store.localPath(item.original.storageKey),
      correctionSchema.parse(correction.params),
      { previews: { preview: PREVIEW_SIDE, thumbnail: THUMBNAIL_SIDE, correctedOnly: true } },
      uploadLimits(),
    );
    await store.put(key, result.buffer);
    await store.put(derivedKeys.renderPreview(itemId, version), result.previews!.corrected.preview!);
    await store.put(derivedKeys.renderThumbnail(itemId, version), result.previews!.corrected.thumbnail!);
  } catch (err) {
    // The scan decoded once already; if it no longer does, keep the earlier render and say why.
    if (err instanceof ScanRejected) {
      console.error(`[render] item ${itemId} v${version}: ${err.message}`);
      return;
    }
    throw err;
  }
  await Item.update(
    { renderKey: key, renderVersion: version },
    { where: { id: itemId, [Op.or]: [{ renderVersion: null }, { renderVersion: { [Op.lt]: version } }] } },
  );
}

export const renderHandler: JobHandler = {
  queue: RENDER_QUEUE.name,
  concurrency: (c) => Math.max(1, Math.floor(c.workerConcurrency / 2)),
  handle: async (jobs: PgBoss.Job<RenderJob>[]) => {
    for (const job of jobs) await renderVersion(job);
  },
};
