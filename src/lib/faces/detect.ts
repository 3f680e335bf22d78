/**
 * Finding the faces in a print and describing each one, so that the same person can be recognised
 * on other prints. The detector (an SSD MobileNet v1), the 68-point landmark net that aligns each
 * face and the face descriptor net (128 numbers per face) are the models shipped inside the
 * `@vladmandic/face-api` package, read from its `model` folder in node_modules. They run on
 * TensorFlow.js with its WebAssembly backend, whose `.wasm` files are read from the
 * `@tensorflow/tfjs-backend-wasm` folder in node_modules: nothing is fetched and nothing native is
 * loaded. Node only (it reads files); one set of models per process, loaded on first use (a second or
 * two) and kept.
 *
 * The caller decodes the picture (a review copy of about 1000 px on its long side is plenty: the
 * detector looks at a 512 px square anyway).
 */
import { createRequire } from 'node:module';
import path from 'node:path';

const require = createRequire(import.meta.url);

type FaceApi = typeof import('@vladmandic/face-api');

/** Decoded 8-bit RGB pixels, 3 channels interleaved, rows top to bottom. */
export interface RgbPixels {
  width: number;
  height: number;
  data: Uint8Array;
}

/** A face found in a picture. */
export interface FoundFace {
  /** The face's box as fractions of the picture's width and height, from its top-left corner. */
  box: { x: number; y: number; w: number; h: number };
  /** The detector's confidence, 0..1. */
  score: number;
  /** 128 numbers describing the face; two pictures of one person lie close (Euclidean distance). */
  descriptor: Float32Array;
}

export interface FindFacesOptions {
  /** Look at a grey copy, so that a faded or cast colour does not lead the detector astray. */
  grey?: boolean;
  /** Faces the detector is less sure of than this are left out (default 0.5). */
  minScore?: number;
}

let loading: Promise<FaceApi> | undefined;

function packageFolder(name: string): string {
  return path.dirname(require.resolve(`${name}/package.json`));
}

/** The library with its models loaded, once per process. */
function faceModels(): Promise<FaceApi> {
  loading ??= (async () => {
    // the package's Node build for the WebAssembly backend: it needs @tensorflow/tfjs and
    // @tensorflow/tfjs-backend-wasm, never the native @tensorflow/tfjs-node
    const faceapi = require('@vladmandic/face-api/dist/face-api.node-wasm.js') as FaceApi;
    // its `tf` is @tensorflow/tfjs with the wasm backend's exports, more than its typings list
    const tf = faceapi.tf as unknown as typeof import('@tensorflow/tfjs') & typeof import('@tensorflow/tfjs-backend-wasm');
    tf.setWasmPaths(packageFolder('@tensorflow/tfjs-backend-wasm') + '/dist/');
    await tf.setBackend('wasm');
    await tf.ready();
    const models = path.join(packageFolder('@vladmandic/face-api'), 'model');
    await faceapi.nets.ssdMobilenetv1.loadFromDisk(models);
    await faceapi.nets.faceLandmark68Net.loadFromDisk(models);
    await faceapi.nets.faceRecognitionNet.loadFromDisk(models);
    return faceapi;
  })();
  loading.catch(() => (loading = undefined));
  return loading;
}

/**
 * A grey copy, the grey kept in all three channels as the detector expects. Luma weights of
 * ITU-R BT.601 (0.299, 0.587, 0.114), applied to the encoded values as video luma is.
 */
export function greyCopy(pixels: RgbPixels): RgbPixels {
  const { data } = pixels;
  const out = new Uint8Array(data.length);
  for (let i = 0; i < data.length; i += 3) {
    const y = Math.round(0.299 * data[i] + 0.587 * data[i + 1] + 0.114 * data[i + 2]);
    out[i] = out[i + 1] = out[i + 2] = y;
  }
  return { width: pixels.width, height: pixels.height, data: out };
}

/** The faces in a picture, the surest first. */
export async function findFaces(pixels: RgbPixels, options: FindFacesOptions = {}): Promise<FoundFace[]> {
  const { width, height } = pixels;
  if (pixels.data.length !== width * height * 3) throw new RangeError(`expected ${width}×${height}×3 bytes, got ${pixels.data.length}`);
  const faceapi = await faceModels();
  const seen = options.grey ? greyCopy(pixels) : pixels;
  const input = faceapi.tf.tensor3d(seen.data, [height, width, 3], 'int32');
  try {
    const found = await faceapi
      .detectAllFaces(input, new faceapi.SsdMobilenetv1Options({ minConfidence: options.minScore ?? 0.5 }))
      .withFaceLandmarks()
      .withFaceDescriptors();
    return found
      .map((f) => {
        const b = f.detection.box;
        // the detector's box may stick out of the picture a little
        const x = Math.max(0, b.x);
        const y = Math.max(0, b.y);
        return {
          box: { x: x / width, y: y / height, w: (Math.min(width, b.x + b.width) - x) / width, h: (Math.min(height, b.y + b.height) - y) / height },
          score: f.detection.score,
          descriptor: f.descriptor,
        };
      })
      .sort((a, b) => b.score - a.score);
  } finally {
    input.dispose();
  }
}

/** The Euclidean distance between two face descriptors. */
export function descriptorDistance(a: Float32Array, b: Float32Array): number {
  if (a.length !== b.length) throw new RangeError('descriptors of different lengths');
  let sum = 0;
  for (let i = 0; i < a.length; i++) sum += (a[i] - b[i]) ** 2;
  return Math.sqrt(sum);
}
