/**
 * Finding faces and describing them, on real photographs taken at run time from Debian's packages
 * as the restoration lab takes them (tests/lab/photos.ts; never committed): the portrait of Grace
 * Hopper from matplotlib's sample data, the astronaut from scikit-image's data, the two people of
 * the lomiri "friends" wallpaper, and scikit-image's coffee cup with no one in it. The same face
 * is faded by the lab's print simulator (tests/lab/simulator.ts), cropped and rescaled.
 */
import sharp from 'sharp';
import { beforeAll, describe, expect, it } from 'vitest';
import { descriptorDistance, findFaces, greyCopy, type FoundFace, type RgbPixels } from '../../../src/lib/faces/detect.ts';
import { PHOTOS, loadPhoto, type Photo } from '../../lab/photos.ts';
import { agePhoto, drawAgeing, rng } from '../../lab/simulator.ts';

const photo = (id: string) => loadPhoto(PHOTOS.find((p) => p.id === id)!, 1024);

/** A region of the picture as fractions of its width and height. */
interface Region {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

function centreInside(face: FoundFace, r: Region): boolean {
  const cx = face.box.x + face.box.w / 2;
  const cy = face.box.y + face.box.h / 2;
  return cx >= r.x0 && cx <= r.x1 && cy >= r.y0 && cy <= r.y1;
}

async function cropAndScale(p: RgbPixels, crop: Region, scale: number): Promise<RgbPixels> {
  const left = Math.round(crop.x0 * p.width);
  const top = Math.round(crop.y0 * p.height);
  const width = Math.round((crop.x1 - crop.x0) * p.width);
  const height = Math.round((crop.y1 - crop.y0) * p.height);
  const { data, info } = await sharp(p.data, { raw: { width: p.width, height: p.height, channels: 3 } })
    .extract({ left, top, width, height })
    .resize(Math.round(width * scale))
    .raw()
    .toBuffer({ resolveWithObject: true });
  return { width: info.width, height: info.height, data: new Uint8Array(data) };
}

/** The surest face of a picture; the test fails when there is none. */
async function surestFace(p: RgbPixels, grey = false): Promise<FoundFace> {
  const faces = await findFaces(p, { grey });
  expect(faces.length).toBeGreaterThan(0);
  return faces[0];
}

// The faces' regions, by eye from the pictures at 1024 px (brow to chin, cheek to cheek, with some room).
const PORTRAIT_FACE: Region = { x0: 0.33, y0: 0.2, x1: 0.7, y1: 0.56 };
const ASTRONAUT_FACE: Region = { x0: 0.35, y0: 0.12, x1: 0.53, y1: 0.34 };

describe('finding faces', () => {
  let portrait: Photo;
  let astronaut: Photo;
  beforeAll(async () => {
    portrait = await photo('portrait');
    astronaut = await photo('astronaut');
  });

  it('finds the face of the portrait where it is', async () => {
    const faces = await findFaces(portrait);
    expect(faces.length).toBeGreaterThan(0);
    expect(faces[0].score).toBeGreaterThan(0.8);
    expect(centreInside(faces[0], PORTRAIT_FACE)).toBe(true);
    // the face is about a third of the picture's width (by eye)
    expect(faces[0].box.w).toBeGreaterThan(0.2);
    expect(faces[0].box.w).toBeLessThan(0.5);
    expect(faces[0].descriptor).toBeInstanceOf(Float32Array);
    expect(faces[0].descriptor.length).toBe(128);
  });

  it('finds the face of the astronaut where it is, also on a grey copy', async () => {
    for (const grey of [false, true]) {
      const face = await surestFace(astronaut, grey);
      expect(face.score).toBeGreaterThan(0.8);
      expect(centreInside(face, ASTRONAUT_FACE)).toBe(true);
      expect(face.box.w).toBeGreaterThan(0.08);
      expect(face.box.w).toBeLessThan(0.3);
    }
  });

  it('makes a grey copy with the BT.601 luma in each channel', () => {
    // pure red, green and blue give 0.299, 0.587 and 0.114 of 255 (ITU-R BT.601)
    const grey = greyCopy({ width: 3, height: 1, data: new Uint8Array([255, 0, 0, 0, 255, 0, 0, 0, 255]) });
    expect(Array.from(grey.data)).toEqual([76, 76, 76, 150, 150, 150, 29, 29, 29]);
  });

  it('finds no face, or none it is sure of, in a picture with no one in it', async () => {
    for (const id of ['coffee', 'coins']) {
      const faces = await findFaces(await photo(id), { minScore: 0.2 });
      expect(faces.every((f) => f.score < 0.5)).toBe(true);
    }
  });

  it('describes the same face faded, cropped and rescaled closer to itself than to other people', async () => {
    const original = (await surestFace(portrait)).descriptor;
    // a heavy dark fading (cyan keeping half its density) over a drawn ageing: invented for the test
    const ageing = { ...drawAgeing(rng(20), 'dark', { border: false }), slope: [0.5, 0.75, 0.9] as [number, number, number] };
    const aged = agePhoto(portrait, ageing, 20);
    const faded: RgbPixels = { width: aged.width, height: aged.height, data: aged.aged };
    const same = [
      (await surestFace(faded)).descriptor,
      (await surestFace(faded, true)).descriptor,
      (await surestFace(await cropAndScale(portrait, { x0: 0.15, y0: 0.05, x1: 0.9, y1: 0.8 }, 0.6))).descriptor,
      (await surestFace(await cropAndScale(faded, { x0: 0.2, y0: 0.1, x1: 0.85, y1: 0.7 }, 1.4), true)).descriptor,
    ];

    const friends = await findFaces(await photo('friends'));
    expect(friends.length).toBeGreaterThanOrEqual(1);
    const others = [(await surestFace(astronaut)).descriptor, ...friends.map((f) => f.descriptor)];

    const nearestOther = Math.min(...others.flatMap((o) => [original, ...same].map((s) => descriptorDistance(o, s))));
    const farthestSame = Math.max(...same.map((s) => descriptorDistance(original, s)));
    expect(farthestSame).toBeLessThan(nearestOther);
  });
});
