/**
 * The accuracy lab's photographs: openly licensed photographs from Debian's packages, fetched at
 * run time (`apt-get download` + `dpkg -x`, no install) into a cache outside the repository, never
 * committed, never used as demo data. Drawings and renders in those packages are left out.
 * Each photograph belongs to one part: `dev` (the estimator's priors are fitted on it) or
 * `validation` (only reported). tests/lab/README.md lists the files and their licences.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';

export type Category = 'people-pets' | 'indoor' | 'outdoor' | 'foliage' | 'sunset' | 'night' | 'single-colour' | 'no-neutral' | 'monochrome';
export type Part = 'dev' | 'validation';

export interface PhotoSource {
  id: string;
  pkg: string;
  /** Path inside the unpacked package. */
  path: string;
  category: Category;
  part: Part;
  licence: string;
}

const LOMIRI16 = 'usr/share/backgrounds/';
const PLASMA = (name: string, size = '2560x1600.jpg') => `usr/share/wallpapers/${name}/contents/images/${size}`;
const SKIMAGE = 'usr/lib/python3/dist-packages/skimage/data/';
const SKLEARN = 'usr/lib/python3/dist-packages/sklearn/datasets/images/';
const MATE = 'usr/share/backgrounds/mate/nature/';

/** Every photograph the lab uses, with its category and part; licences as each package's copyright file or metadata states them. */
export const PHOTOS: PhotoSource[] = [
  // people and pets
  { id: 'astronaut', pkg: 'python3-skimage', path: SKIMAGE + 'astronaut.png', category: 'people-pets', part: 'validation', licence: 'public domain (NASA), per skimage/data/_fetchers.py' },
  { id: 'chelsea', pkg: 'python3-skimage', path: SKIMAGE + 'chelsea.png', category: 'people-pets', part: 'dev', licence: 'CC0 (Stefan van der Walt), per skimage/data/_fetchers.py' },
  { id: 'friends', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'friends_by_Aitzol_Berasategi.jpg', category: 'people-pets', part: 'validation', licence: 'CC-BY-4.0, Aitzol Berasategi' },
  // indoor
  { id: 'wine', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'Wine_by_Jakkub_Mede.jpg', category: 'indoor', part: 'validation', licence: 'CC-BY-4.0, Jakub Mede' },
  { id: 'coffee', pkg: 'python3-skimage', path: SKIMAGE + 'coffee.png', category: 'indoor', part: 'dev', licence: 'CC0 (Rachel Michetti), per skimage/data/_fetchers.py' },
  { id: 'lamps', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'free_by_Peter_Nerlich.jpg', category: 'indoor', part: 'dev', licence: 'CC-BY-SA-4.0, Peter Nerlich' },
  { id: 'motorcycle', pkg: 'python3-skimage', path: SKIMAGE + 'motorcycle_left.png', category: 'indoor', part: 'validation', licence: 'as stated in skimage/data/_fetchers.py (Middlebury stereo data set)' },
  // outdoor: mountains, beach, snow, buildings
  { id: 'aitzgorri', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'aitzgorri_by_Aitzol_Berasategi.jpg', category: 'outdoor', part: 'dev', licence: 'CC-BY-4.0, Aitzol Berasategi' },
  { id: 'picos', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'picosdeeuropa_by_Aitzol_Berasategi.jpg', category: 'outdoor', part: 'validation', licence: 'CC-BY-4.0, Aitzol Berasategi' },
  { id: 'beach', pkg: 'plasma-workspace-wallpapers', path: PLASMA('Volna', '5120x2880.jpg'), category: 'outdoor', part: 'dev', licence: 'CC-BY-SA-4.0, per its metadata.json' },
  { id: 'nuthatch-snow', pkg: 'lomiri-wallpapers-20.04', path: LOMIRI16 + 'Kleiber_by_Lukas_Baubkus.jpg', category: 'outdoor', part: 'validation', licence: 'CC-BY-SA-3.0, Lukas Baubkus' },
  { id: 'bridge', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'Bridge_by_Sander_Klootwijk.jpg', category: 'outdoor', part: 'dev', licence: 'CC-BY-SA-4.0, Sander Klootwijk' },
  { id: 'pagoda', pkg: 'python3-sklearn', path: SKLEARN + 'china.jpg', category: 'outdoor', part: 'validation', licence: 'CC-BY-2.0, danielbuechele (sklearn/datasets/images/README.txt)' },
  // gardens and foliage
  { id: 'dandelions', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'seeding_by_Clements_Engelhardt.jpg', category: 'foliage', part: 'dev', licence: 'CC0-1.0, Clemens Engelhardt' },
  { id: 'dragonfly', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'Dragonfly_by_Bolly.jpg', category: 'foliage', part: 'validation', licence: 'CC-BY-SA-4.0, "Bolly"' },
  { id: 'plants', pkg: 'plasma-workspace-wallpapers', path: PLASMA('OneStandsOut'), category: 'foliage', part: 'dev', licence: 'LGPLv3, per its metadata.json' },
  { id: 'forest-path', pkg: 'plasma-workspace-wallpapers', path: PLASMA('Path'), category: 'foliage', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  { id: 'stream', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'life_by_Aitzol_Berasategi.jpg', category: 'foliage', part: 'dev', licence: 'CC-BY-4.0, Aitzol Berasategi' },
  { id: 'leaf', pkg: 'plasma-workspace-wallpapers', path: PLASMA('FallenLeaf'), category: 'foliage', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  // sunsets and dusk
  { id: 'sunset', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'sunset_by_Aitzol_Berasategi.jpg', category: 'sunset', part: 'validation', licence: 'CC-BY-4.0, Aitzol Berasategi' },
  { id: 'boats', pkg: 'plasma-workspace-wallpapers', path: PLASMA('EveningGlow'), category: 'sunset', part: 'dev', licence: 'LGPLv3, Ian Hex, per its metadata.json' },
  { id: 'lake-dusk', pkg: 'plasma-workspace-wallpapers', path: PLASMA('summer_1am'), category: 'sunset', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  { id: 'pier', pkg: 'plasma-workspace-wallpapers', path: PLASMA('BytheWater'), category: 'sunset', part: 'dev', licence: 'LGPLv3, per its metadata.json' },
  // night
  { id: 'milky-way', pkg: 'plasma-workspace-wallpapers', path: PLASMA('MilkyWay', '5120x2880.png'), category: 'night', part: 'dev', licence: 'CC-BY-SA-4.0, per its metadata.json' },
  { id: 'rocket', pkg: 'python3-skimage', path: SKIMAGE + 'rocket.jpg', category: 'night', part: 'validation', licence: 'public domain (SpaceX), per skimage/data/_fetchers.py' },
  // a frame-filling single colour
  { id: 'fig', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'Picture_0B_by_freespace.jpg', category: 'single-colour', part: 'validation', licence: 'CC-BY-4.0, Trevor "Freespace"' },
  { id: 'dahlia', pkg: 'python3-sklearn', path: SKLEARN + 'flower.jpg', category: 'single-colour', part: 'dev', licence: 'CC-BY-2.0, vultilion (sklearn/datasets/images/README.txt)' },
  { id: 'blue-mist', pkg: 'plasma-workspace-wallpapers', path: PLASMA('DarkestHour'), category: 'single-colour', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  { id: 'kite', pkg: 'plasma-workspace-wallpapers', path: PLASMA('Kite'), category: 'single-colour', part: 'dev', licence: 'LGPLv3, per its metadata.json' },
  // no neutral at all
  { id: 'cups', pkg: 'plasma-workspace-wallpapers', path: PLASMA('ColorfulCups'), category: 'no-neutral', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  { id: 'brushes', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'Picture_1A_by_freespace.jpg', category: 'no-neutral', part: 'dev', licence: 'CC-BY-4.0, Trevor "Freespace"' },
  // black-and-white (aged as black-and-white prints on a yellowing base)
  { id: 'cameraman', pkg: 'python3-skimage', path: SKIMAGE + 'camera.png', category: 'monochrome', part: 'validation', licence: 'CC0 (Lav Varshney), per skimage/data/_fetchers.py' },
  { id: 'coins', pkg: 'python3-skimage', path: SKIMAGE + 'coins.png', category: 'monochrome', part: 'dev', licence: 'public domain, per skimage/data/_fetchers.py' },
  { id: 'facade', pkg: 'plasma-workspace-wallpapers', path: PLASMA('Grey'), category: 'monochrome', part: 'validation', licence: 'LGPLv3, per its metadata.json' },
  { id: 'grey-pier', pkg: 'plasma-workspace-wallpapers', path: PLASMA('ColdRipple'), category: 'monochrome', part: 'dev', licence: 'LGPLv3, per its metadata.json' },
  // more development photographs, added after the first 35 so that every earlier case keeps its seed
  // (cases are seeded by a photograph's place in this list); the validation part is unchanged
  { id: 'water-drop', pkg: 'mate-backgrounds', path: MATE + 'Aqua.jpg', category: 'no-neutral', part: 'dev', licence: 'GPL-2+, Charles Barbin, per its copyright file' },
  { id: 'leaf-veins', pkg: 'mate-backgrounds', path: MATE + 'Blinds.jpg', category: 'foliage', part: 'dev', licence: 'GPL-2+, Lennart Poettering and Andrea Cimitan, per its copyright file' },
  { id: 'dune-grass', pkg: 'mate-backgrounds', path: MATE + 'Dune.jpg', category: 'outdoor', part: 'dev', licence: 'GPL-2+, Marco Cogoni and Hylke Bons, per its copyright file' },
  { id: 'orange-petals', pkg: 'mate-backgrounds', path: MATE + 'FreshFlower.jpg', category: 'single-colour', part: 'dev', licence: 'GPL-2+, Jens Ansorg, per its copyright file' },
  { id: 'marigold', pkg: 'mate-backgrounds', path: MATE + 'Garden.jpg', category: 'foliage', part: 'dev', licence: 'GPL-2+, Charles Barbin, per its copyright file' },
  { id: 'meadow', pkg: 'mate-backgrounds', path: MATE + 'GreenMeadow.jpg', category: 'single-colour', part: 'dev', licence: 'GPL-2+, Timothy Schellhase and Lapo Calamandrei, per its copyright file' },
  { id: 'ladybird', pkg: 'mate-backgrounds', path: MATE + 'LadyBird.jpg', category: 'foliage', part: 'dev', licence: 'GPL-2+, Charles Barbin, per its copyright file' },
  { id: 'rain-drops', pkg: 'mate-backgrounds', path: MATE + 'RainDrops.jpg', category: 'foliage', part: 'dev', licence: 'GPL-2+, "blackcombwhistler07", per its copyright file' },
  { id: 'storm', pkg: 'mate-backgrounds', path: MATE + 'Storm.jpg', category: 'outdoor', part: 'dev', licence: 'GPL-2+, Sergey Nazarov, per its copyright file' },
  { id: 'seed-heads', pkg: 'mate-backgrounds', path: MATE + 'TwoWings.jpg', category: 'foliage', part: 'dev', licence: 'GPL-2+, Charles Barbin and Hylke Bons, per its copyright file' },
  { id: 'planks', pkg: 'mate-backgrounds', path: MATE + 'Wood.jpg', category: 'indoor', part: 'dev', licence: 'GPL-2+, Jean-François Fortin Tam, per its copyright file' },
  { id: 'yellow-flower', pkg: 'mate-backgrounds', path: MATE + 'YellowFlower.jpg', category: 'single-colour', part: 'dev', licence: 'GPL-2+, Charles Barbin, per its copyright file' },
  { id: 'portrait', pkg: 'python-matplotlib-data', path: 'usr/share/matplotlib/mpl-data/sample_data/grace_hopper.jpg', category: 'people-pets', part: 'dev', licence: 'matplotlib sample data under its package licence (copyright file); a U.S. Navy photograph in the public domain (from memory)' },
  { id: 'clock', pkg: 'lomiri-wallpapers-16.04', path: LOMIRI16 + 'greentock_by_Peter_Nerlich.jpg', category: 'indoor', part: 'dev', licence: 'CC-BY-SA-4.0, Peter Nerlich' },
  { id: 'sea-stars', pkg: 'lomiri-wallpapers-20.04', path: LOMIRI16 + 'Infinite-Sea_by_Aury88.jpg', category: 'night', part: 'dev', licence: 'CC-BY-SA-3.0, Aury88' },
];

/** Where packages, unpacked files and decoded copies are kept between runs (outside the repository). */
export function labCache(): string {
  const dir = process.env.DRAWERLIGHT_LAB_CACHE ?? join(process.env.XDG_CACHE_HOME ?? join(homedir(), '.cache'), 'drawerlight-lab');
  mkdirSync(dir, { recursive: true });
  return dir;
}

let aptUpdated = false;

/** Downloads and unpacks one Debian package into the cache (once); returns the unpacked folder. */
export function unpackedPackage(pkg: string): string {
  const cache = labCache();
  const into = join(cache, 'unpacked', pkg);
  if (existsSync(join(into, '.done'))) return into;
  const debs = join(cache, 'debs');
  mkdirSync(debs, { recursive: true });
  const find = () => execFileSync('sh', ['-c', `ls ${debs}/${pkg}_*.deb 2>/dev/null | head -1`]).toString().trim();
  if (!find()) {
    const download = () => execFileSync('apt-get', ['download', pkg], { cwd: debs, stdio: ['ignore', 'ignore', 'pipe'] });
    try {
      download();
    } catch {
      if (aptUpdated) throw new Error(`apt-get download ${pkg} failed`);
      // a fresh machine has no package lists yet
      execFileSync('apt-get', ['update', '-qq'], { stdio: 'ignore' });
      aptUpdated = true;
      download();
    }
  }
  mkdirSync(into, { recursive: true });
  execFileSync('dpkg', ['-x', find(), into]);
  writeFileSync(join(into, '.done'), '');
  return into;
}

/** A decoded photograph: 8-bit sRGB, 3 channels, interleaved. */
export interface Photo {
  id: string;
  width: number;
  height: number;
  data: Uint8Array;
}

/**
 * The photograph at most `longSide` pixels on its long side, decoded to 8-bit sRGB RGB (embedded
 * profiles honoured, greyscale expanded), cached as raw pixels.
 */
export async function loadPhoto(src: PhotoSource, longSide: number): Promise<Photo> {
  const cache = join(labCache(), 'decoded');
  mkdirSync(cache, { recursive: true });
  const file = join(cache, `${src.id}-${longSide}.rgb`);
  const meta = `${file}.json`;
  if (existsSync(file) && existsSync(meta)) {
    const { width, height } = JSON.parse(readFileSync(meta, 'utf8')) as { width: number; height: number };
    return { id: src.id, width, height, data: new Uint8Array(readFileSync(file)) };
  }
  const input = join(unpackedPackage(src.pkg), src.path);
  const { data, info } = await sharp(input)
    .rotate()
    .resize(longSide, longSide, { fit: 'inside', withoutEnlargement: true })
    .toColourspace('srgb')
    .removeAlpha()
    .raw()
    .toBuffer({ resolveWithObject: true });
  const rgb = info.channels === 3 ? new Uint8Array(data) : expandToRgb(new Uint8Array(data), info.channels);
  writeFileSync(file, rgb);
  writeFileSync(meta, JSON.stringify({ width: info.width, height: info.height }));
  return { id: src.id, width: info.width, height: info.height, data: rgb };
}

function expandToRgb(data: Uint8Array, channels: number): Uint8Array {
  const n = data.length / channels;
  const out = new Uint8Array(n * 3);
  for (let i = 0; i < n; i++) for (let c = 0; c < 3; c++) out[i * 3 + c] = data[i * channels + Math.min(c, channels - 1)];
  return out;
}

/** The photographs of one part (or all), in list order. */
export function photosOf(part?: Part): PhotoSource[] {
  return PHOTOS.filter((p) => !part || p.part === part);
}
