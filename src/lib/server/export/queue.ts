/** The export queue and the sweep that sends exports left by a stopped worker back to it. */
import { Op } from 'sequelize';
import { ArchiveExport } from '../../../../db/index.ts';
import { config } from '../config.ts';
import { sendJob } from '../queue.ts';
import { EXPORT_QUEUE, type ExportJob } from '../queues.ts';

/** The export queue and its job's data (declared with every queue in queues.ts). */
export { EXPORT_QUEUE, type ExportJob };

/**
 * Sends exports whose worker died back to the queue: state `running` with no progress saved for
 * `exportStallMs` (a live run saves progress at least every half second per print). The old job
 * stays leased until pg-boss expires it and then finds the export ready. Returns how many.
 */
export async function resumeStalledExports(now = Date.now()): Promise<number> {
  const stalled = await ArchiveExport.findAll({ where: { state: 'running', updatedAt: { [Op.lt]: new Date(now - config().exportStallMs) } }, attributes: ['id', 'updatedAt'] });
  let resumed = 0;
  for (const e of stalled) {
    // Only one sweeping worker wins the row: the update matches the time it saw.
    const [n] = await ArchiveExport.update({ state: 'queued' }, { where: { id: e.id, state: 'running', updatedAt: e.updatedAt } });
    if (!n) continue;
    await sendJob(EXPORT_QUEUE.name, { exportId: e.id });
    resumed++;
  }
  return resumed;
}
