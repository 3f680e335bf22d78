/**
 * The full-resolution corrected JPEG of one correction version of an item, made by the render
 * queue (jobs/render.ts, on the worker's engine threads). The files go under
 * renders/<item>/v<version>.jpg, so a retried render overwrites its own output; the item points at
 * the newest rendered version, never back at an older one.
 */
import { Op, literal } from 'sequelize';
import { Correction, Item, Original } from '../../../db/index.ts';
import { correctionSchema, type Correction as CorrectionParams } from '../restoration/correction.ts';
import { renderCorrected, ScanRejected, type RenderOptions, type RenderResult, type ScanLimits } from '../restoration/imaging.ts';
import { uploadLimits } from './body-limits.ts';
import { derivedKeys, PREVIEW_SIDE, THUMBNAIL_SIDE } from './processing.ts';
import { storage } from './storage.ts';

/** The engine call that renders: the engine itself in this thread, or the worker's engine threads. */
export type Renderer = (path: string, correction: CorrectionParams, options: RenderOptions, limits?: Partial<ScanLimits>) => Promise<RenderResult>;

export type RenderOutcome = 'rendered' | 'done already' | 'superseded' | 'gone' | 'unreadable';

/**
 * Renders `version` of an item unless it is rendered already or a newer version has superseded it
 * (that one has a job of its own). Writes the render and, unless they exist, the version's small
 * copies, then points the item at them. A scan that no longer decodes keeps its earlier render ('unreadable').
 */
export async function renderItemVersion(itemId: string, version: number, renderer: Renderer = renderCorrected): Promise<RenderOutcome> {
  const item = (await Item.findByPk(itemId, { include: [{ model: Original, as: 'original' }] })) as (Item & { original: Original }) | null;
  const correction = item ? await Correction.findOne({ where: { itemId, version } }) : null;
  if (!item || !correction) return 'gone';
  if ((item.renderVersion ?? 0) >= version && item.renderKey) return 'done already';
  if ((item.currentVersion ?? 0) > version) return 'superseded';

  const store = storage();
  const key = derivedKeys.render(itemId, version);
  // the analyse job made the small copies of its proposal already; later versions get theirs here
  const smallCopiesMade = (item.previewVersion ?? 0) >= version;
  try {
    const result = await renderer(
      await store.localPath(item.original.storageKey),
      correctionSchema.parse(correction.params),
      smallCopiesMade ? {} : { previews: { preview: PREVIEW_SIDE, thumbnail: THUMBNAIL_SIDE, correctedOnly: true } },
      uploadLimits(),
    );
    await Promise.all([
      store.put(key, result.buffer),
      smallCopiesMade ? undefined : store.put(derivedKeys.renderPreview(itemId, version), result.previews!.corrected.preview!),
      smallCopiesMade ? undefined : store.put(derivedKeys.renderThumbnail(itemId, version), result.previews!.corrected.thumbnail!),
    ]);
  } catch (err) {
    if (err instanceof ScanRejected) {
      console.error(`[render] item ${itemId} v${version}: ${err.message}`);
      return 'unreadable';
    }
    throw err;
  }
  await Item.update(
    { renderKey: key, renderVersion: version, previewVersion: literal(`GREATEST(COALESCE(preview_version, 0), ${Number(version)})`) as unknown as number },
    { where: { id: itemId, [Op.or]: [{ renderVersion: null }, { renderVersion: { [Op.lt]: version } }] } },
  );
  return 'rendered';
}
