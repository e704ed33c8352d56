// A factor column's levels as the reader meets them: codes in order of first
// appearance, looked up from a field's bytes without making a string. A level
// of at most 6 bytes is keyed by its bytes and length packed into one exact
// number, in an open-addressing table with linear probing (Knuth, TAOCP vol. 3,
// 6.4, algorithm L) indexed by the FNV-1a hash of the bytes; a longer one by
// that hash in a Map, with the bytes compared on a hit.

export interface LevelIndex {
  levels: string[];
  /** Hash of the bytes → codes with that hash. */
  byHash: Map<number, number[]>;
  /** Short levels' table: packed key (−1: empty slot), code and hash per slot; a power of two in size. */
  shortKeys: Float64Array;
  shortCodes: Int32Array;
  shortHashes: Int32Array;
  shortCount: number;
  levelBytes: Uint8Array[];
}

const decoder = new TextDecoder("utf-8");
const encoder = new TextEncoder();

export function emptyLevelIndex(): LevelIndex {
  return {
    levels: [],
    byHash: new Map(),
    shortKeys: new Float64Array(64).fill(-1),
    shortCodes: new Int32Array(64),
    shortHashes: new Int32Array(64),
    shortCount: 0,
    levelBytes: [],
  };
}

/** The code of the level spelt by bytes [s, e) of b, a new code when it is new. */
export function codeOfBytes(ix: LevelIndex, b: Uint8Array, s: number, e: number): number {
  // Kept small, so that the reader's record loop can inline the lookup of a short level that is already known.
  if (e - s > 6) return codeOfLongBytes(ix, b, s, e);
  // Short levels (ward codes, sexes, years): the bytes and the length are the key.
  let key = e - s,
    h = 0x811c9dc5;
  for (let k = s; k < e; k++) {
    key = key * 256 + b[k];
    h = Math.imul(h ^ b[k], 0x01000193);
  }
  const keys = ix.shortKeys,
    mask = keys.length - 1;
  let at = (h ^ (h >>> 16)) & mask;
  for (let k = keys[at]; k !== -1; k = keys[at]) {
    if (k === key) return ix.shortCodes[at];
    at = (at + 1) & mask;
  }
  return newShortLevel(ix, b, s, e, key, h, at);
}

function newShortLevel(ix: LevelIndex, b: Uint8Array, s: number, e: number, key: number, h: number, at: number) {
  const code = newLevel(ix, b, s, e);
  ix.shortKeys[at] = key;
  ix.shortCodes[at] = code;
  ix.shortHashes[at] = h;
  if (++ix.shortCount * 2 > ix.shortKeys.length) growShort(ix);
  return code;
}

function codeOfLongBytes(ix: LevelIndex, b: Uint8Array, s: number, e: number): number {
  let h = 0x811c9dc5;
  for (let k = s; k < e; k++) h = Math.imul(h ^ b[k], 0x01000193);
  const list = ix.byHash.get(h);
  if (list)
    for (const code of list) {
      const lb = ix.levelBytes[code];
      if (lb.length !== e - s) continue;
      let k = 0;
      while (k < lb.length && lb[k] === b[s + k]) k++;
      if (k === lb.length) return code;
    }
  const code = newLevel(ix, b, s, e);
  if (list) list.push(code);
  else ix.byHash.set(h, [code]);
  return code;
}

/** The code of a level given as text. */
export function codeOfString(ix: LevelIndex, t: string): number {
  const bytes = encoder.encode(t);
  return codeOfBytes(ix, bytes, 0, bytes.length);
}

/** The short levels' table at twice the size, each entry placed again from its hash. */
function growShort(ix: LevelIndex): void {
  const { shortKeys: keys, shortCodes: codes, shortHashes: hashes } = ix;
  const size = keys.length * 2,
    mask = size - 1;
  ix.shortKeys = new Float64Array(size).fill(-1);
  ix.shortCodes = new Int32Array(size);
  ix.shortHashes = new Int32Array(size);
  for (let j = 0; j < keys.length; j++) {
    if (keys[j] === -1) continue;
    let at = (hashes[j] ^ (hashes[j] >>> 16)) & mask;
    while (ix.shortKeys[at] !== -1) at = (at + 1) & mask;
    ix.shortKeys[at] = keys[j];
    ix.shortCodes[at] = codes[j];
    ix.shortHashes[at] = hashes[j];
  }
}

function newLevel(ix: LevelIndex, b: Uint8Array, s: number, e: number): number {
  const code = ix.levels.length;
  ix.levels.push(decoder.decode(b.subarray(s, e)));
  // A copy, never a view: the reader refills its buffer (and a Buffer's slice is a view).
  ix.levelBytes.push(new Uint8Array(b.subarray(s, e)));
  return code;
}
