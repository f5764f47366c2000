/**
 * Packed step blocks (SPEC.md §5.2) decoded from the SPEC's words alone: the bits as a string of
 * '0' and '1', BigInt for the modulo-2³² arithmetic, DataView for the float patterns. Slow and
 * plain on purpose, so that tests check the codec against the SPEC rather than against itself.
 */

export interface SpecPacked {
  place: { episode: number; firstStep: number; n: number };
  weights: [number, string, string][];
  /** Channel id → the channel's N values (u32 patterns for float channels, numbers for integer channels). */
  channels: Map<number, number[]>;
  /** Channel id → [kind, ref, c, k], as the table says. */
  table: Map<number, [number, number | null, number | null, number]>;
}

const pattern = (x: number) => {
  const v = new DataView(new ArrayBuffer(4));
  v.setFloat32(0, x, true);
  return v.getUint32(0, true);
};
const valueOf = (p: number) => {
  const v = new DataView(new ArrayBuffer(4));
  v.setUint32(0, p, true);
  return v.getFloat32(0, true);
};
/** F(z): binary32 rounding of a binary64 result, every NaN as 0x7FC00000. */
const F = (z: number) => (Number.isNaN(z) ? 0x7fc00000 : pattern(Math.fround(z)));

/** `D`, `A` and the header's extras count E say which channel is which. */
export function decodePackedBySpec(bytes: Uint8Array, n: number, D: number, A: number, extras = 0): SpecPacked {
  const channelAction = D + A + 1;
  const channelFlags = D + A + 2;
  let pos = 0;
  const u8 = () => bytes[pos++];
  const varint = () => {
    let v = 0;
    let shift = 1;
    for (;;) {
      const b = u8();
      v += (b % 128) * shift;
      if (b < 128) return v;
      shift *= 128;
    }
  };
  const id = (tag: number, online: string | null): string => {
    if (tag === 0) return '';
    if (tag === 1) return online!;
    if (tag === 2) return Array.from(bytes.subarray(pos, (pos += 8)), (b) => b.toString(16).padStart(2, '0')).join('');
    const len = varint();
    return new TextDecoder().decode(bytes.subarray(pos, (pos += len)));
  };

  if (u8() !== 1) throw new Error('layout is not 1');
  const place = { episode: varint(), firstStep: varint(), n: varint() };
  if (place.n !== n) throw new Error(`the binary says ${place.n} rows, expected ${n}`);
  const weights: [number, string, string][] = [];
  const runs = varint();
  for (let i = 0; i < runs; i++) {
    const row = varint();
    const tags = u8();
    const online = id(tags & 3, null);
    weights.push([row, online, id(tags >> 2, online)]);
  }
  const present = bytes.subarray(pos, (pos += Math.ceil((1 + extras) / 8)));
  const bit = (j: number) => (present[Math.floor(j / 8)] >> j % 8) & 1;
  const channelIds = Array.from({ length: D + A + 3 }, (_, i) => i);
  if (bit(0)) channelIds.push(D + A + 3);
  for (let i = 0; i < extras; i++) if (bit(1 + i)) channelIds.push(D + A + 4 + i);
  const table = new Map<number, [number, number | null, number | null, number]>();
  for (const channel of channelIds) {
    const code = u8();
    const kind = Math.floor(code / 33);
    const ref = kind >= 2 ? varint() : null;
    let c: number | null = null;
    if (kind === 2 || kind === 3) {
      c = new DataView(bytes.buffer, bytes.byteOffset + pos, 4).getFloat32(0, true);
      pos += 4;
    }
    table.set(channel, [kind, ref, c, code % 33]);
  }
  const order = [...channelIds.filter((l) => table.get(l)![0] <= 1), ...channelIds.filter((l) => table.get(l)![0] >= 2)];

  let bits = '';
  for (let i = pos; i < bytes.length; i++) bits += bytes[i].toString(2).padStart(8, '0');
  let at = 0;
  const take = (count: number) => (count === 0 ? 0 : parseInt(bits.slice(at, (at += count)), 2));

  const channels = new Map<number, number[]>();
  for (const channel of order) {
    const [kind, ref, c, k] = table.get(channel)!;
    const y = ref === null ? null : channels.get(ref)!;
    const v: number[] = [];
    for (let t = 0; t < n; t++) {
      if (t === 0 && kind <= 3 && channel !== channelAction && channel !== channelFlags) {
        v.push(take(32)); // a float channel's first value, written whole
        continue;
      }
      let q = 0;
      while (q < 32 && bits[at] === '1') {
        q++;
        at++;
      }
      let z: number;
      if (q === 32) z = take(32);
      else {
        at++; // the zero bit
        z = q * 2 ** k + take(k);
      }
      const d = z % 2 === 0 ? z / 2 : -(z + 1) / 2;
      let p: number;
      const x = (i: number) => valueOf(v[i]);
      if (kind === 0) p = t === 0 ? 0 : v[t - 1];
      else if (kind === 1) p = t === 0 ? 0 : t === 1 ? v[0] : F(2 * x(t - 1) - x(t - 2));
      else if (kind === 2) p = t === 0 ? 0 : F(x(t - 1) + c! * valueOf(y![t - 1]));
      else if (kind === 3) p = t === 0 ? 0 : F(x(t - 1) + c! * valueOf(y![t]));
      else p = y![t];
      v.push(Number(BigInt.asUintN(32, BigInt(p) + BigInt(d))));
    }
    channels.set(channel, v);
  }
  return { place, weights, channels, table };
}
