/**
 * Bits for packed step blocks (SPEC.md §5.2): unsigned LEB128 varints, and a bit stream, most
 * significant bit first, that carries limited-length Rice codes of prediction residuals.
 *
 * A Rice code with parameter k (Rice 1979; Golomb 1966 with m = 2^k) writes r as q = ⌊r / 2^k⌋ in
 * unary (q one-bits and a zero) and then the k low bits of r. Residuals of a good predictor are
 * small, so most codes take k + 1 or k + 2 bits. One wild value (a NaN, a jump between episodes)
 * would make q enormous, so the unary part is limited as in LOCO-I (Weinberger, Seroussi &
 * Sapiro 2000, §II-C): from q = ESCAPE on, ESCAPE one-bits are followed by all 32 bits of r.
 */

/** Longest unary prefix before the escape to 32 raw bits. */
export const RICE_ESCAPE = 32;

export class BitWriter {
  private bytes: Uint8Array;
  private pos = 0;
  /** Bits not yet written out, right-aligned; fewer than 8 between calls. */
  private acc = 0;
  private accBits = 0;

  constructor(capacityBytes = 256) {
    this.bytes = new Uint8Array(Math.max(16, capacityBytes));
  }

  /** Appends the low `n` bits of `v`, high bit first; n ≤ 24. */
  bits(v: number, n: number): void {
    if (this.pos + 4 > this.bytes.length) this.grow();
    // acc holds fewer than 8 bits, so acc << n stays within 32 bits for n ≤ 24.
    let acc = (this.acc << n) | (v & ((1 << n) - 1));
    let accBits = this.accBits + n;
    while (accBits >= 8) {
      accBits -= 8;
      this.bytes[this.pos++] = acc >>> accBits;
    }
    this.acc = acc & ((1 << accBits) - 1);
    this.accBits = accBits;
  }

  /** Appends `n` bits of a value below 2^32, for any n ≤ 32. */
  wide(v: number, n: number): void {
    if (n > 24) {
      this.bits(Math.floor(v / 65536), n - 16);
      this.bits(v & 0xffff, 16);
    } else this.bits(v, n);
  }

  /**
   * Rice codes of r[from…to) with one k. A code of ≤ 24 bits is packed with the bits in locals;
   * longer ones (wide residuals, k > 23) go as their prefix and their low bits.
   */
  riceChannel(r: Uint32Array, from: number, to: number, k: number): void {
    const lowMask = k >= 32 ? -1 : (1 << k) - 1;
    let acc = this.acc;
    let accBits = this.accBits;
    for (let t = from; t < to; t++) {
      const z = r[t];
      const q = k >= 32 ? 0 : z >>> k;
      const n = q + 1 + k;
      if (n > 24) {
        this.acc = acc;
        this.accBits = accBits;
        if (q < RICE_ESCAPE && q < 24) {
          this.bits(((1 << q) - 1) << 1, q + 1);
          this.wide(k >= 32 ? z : z & lowMask, k);
        } else this.rice(z, k);
        acc = this.acc;
        accBits = this.accBits;
        continue;
      }
      if (this.pos + 4 > this.bytes.length) this.grow();
      acc = (acc << n) | (((1 << q) - 1) << (k + 1)) | (z & lowMask);
      accBits += n;
      while (accBits >= 8) {
        accBits -= 8;
        this.bytes[this.pos++] = acc >>> accBits;
      }
      acc &= (1 << accBits) - 1;
    }
    this.acc = acc;
    this.accBits = accBits;
  }

  rice(r: number, k: number): void {
    const q = k >= 32 ? 0 : r >>> k;
    if (q + 1 + k <= 24) {
      // The common case in one piece: q ones, a zero, k low bits.
      this.bits((((1 << q) - 1) << (k + 1)) | (r & ((1 << k) - 1)), q + 1 + k);
    } else if (q < RICE_ESCAPE) {
      // q ones and a zero, in at most two pieces of ≤ 24 bits.
      if (q + 1 <= 24) this.bits(((1 << q) - 1) << 1, q + 1);
      else {
        this.bits(0xffffff, 24);
        this.bits(((1 << (q - 24)) - 1) << 1, q - 23);
      }
      if (k > 0) this.wide(k >= 32 ? r : r % 2 ** k, k);
    } else {
      this.bits(0xffff, 16);
      this.bits(0xffff, 16);
      this.wide(r, 32);
    }
  }

  /** The bytes written, the last one padded with zero bits. */
  finish(): Uint8Array {
    if (this.accBits > 0) this.bits(0, 8 - this.accBits);
    return this.bytes.subarray(0, this.pos);
  }

  private grow(): void {
    const next = new Uint8Array(this.bytes.length * 2);
    next.set(this.bytes);
    this.bytes = next;
  }
}

export class BitReader {
  private pos: number;
  /** The next `avail` bits of the stream, from the high bit down; the bits below them are zero. */
  private win = 0;
  private avail = 0;

  constructor(
    private readonly bytes: Uint8Array,
    start = 0,
  ) {
    this.pos = start;
  }

  private refill(): void {
    while (this.avail <= 24 && this.pos < this.bytes.length) {
      this.win = (this.win | (this.bytes[this.pos++] << (24 - this.avail))) >>> 0;
      this.avail += 8;
    }
  }

  /** Reads n ≤ 24 bits. Throws a plain Error past the end: the caller names the record. */
  bits(n: number): number {
    if (n === 0) return 0;
    if (this.avail < n) {
      this.refill();
      if (this.avail < n) throw new Error('bit stream ends early');
    }
    const v = this.win >>> (32 - n);
    this.win = (this.win << n) >>> 0;
    this.avail -= n;
    return v;
  }

  wide(n: number): number {
    if (n > 24) return this.bits(n - 16) * 65536 + this.bits(16);
    return this.bits(n);
  }

  /** Reads n Rice codes with parameter k into out[from…from+n), the window in locals (see BitWriter.riceChannel). */
  riceChannel(out: Uint32Array, from: number, n: number, k: number): void {
    const bytes = this.bytes;
    const end = bytes.length;
    let pos = this.pos;
    let win = this.win;
    let avail = this.avail;
    for (let t = from; t < from + n; t++) {
      let q = 0;
      for (;;) {
        while (avail <= 24 && pos < end) {
          win = (win | (bytes[pos++] << (24 - avail))) >>> 0;
          avail += 8;
        }
        if (avail === 0) throw new Error('bit stream ends early');
        const ones = Math.min(Math.clz32(~win), avail, RICE_ESCAPE - q);
        q += ones;
        win = ones === 32 ? 0 : (win << ones) >>> 0;
        avail -= ones;
        if (q === RICE_ESCAPE || avail > 0) break;
      }
      if (q === RICE_ESCAPE) {
        this.pos = pos;
        this.win = win;
        this.avail = avail;
        out[t] = this.wide(32);
        pos = this.pos;
        win = this.win;
        avail = this.avail;
        continue;
      }
      // The ones stopped at a zero inside the window: drop it, then read the k low bits.
      win = (win << 1) >>> 0;
      avail -= 1;
      if (k === 0) {
        out[t] = q;
        continue;
      }
      if (k <= 24) {
        while (avail < k && pos < end) {
          win = (win | (bytes[pos++] << (24 - avail))) >>> 0;
          avail += 8;
        }
        if (avail < k) throw new Error('bit stream ends early');
        out[t] = q * (1 << k) + (win >>> (32 - k));
        win = (win << k) >>> 0;
        avail -= k;
      } else {
        this.pos = pos;
        this.win = win;
        this.avail = avail;
        out[t] = q * 2 ** k + this.wide(k);
        pos = this.pos;
        win = this.win;
        avail = this.avail;
      }
    }
    this.pos = pos;
    this.win = win;
    this.avail = avail;
  }

  /** One Rice code: the channel reader on a single value, so the unary part and its escape live in one place. */
  rice(k: number): number {
    const one = new Uint32Array(1);
    this.riceChannel(one, 0, 1, k);
    return one[0];
  }
}

export class ByteWriter {
  private bytes = new Uint8Array(64);
  private pos = 0;

  u8(v: number): void {
    this.room(1);
    this.bytes[this.pos++] = v;
  }

  /** Unsigned LEB128: seven bits a byte, low group first, high bit set on all but the last. */
  varint(v: number): void {
    if (!Number.isSafeInteger(v) || v < 0) throw new RangeError(`varint: ${v} is not a count`);
    this.room(8);
    while (v >= 0x80) {
      this.bytes[this.pos++] = (v % 0x80) | 0x80;
      v = Math.floor(v / 0x80);
    }
    this.bytes[this.pos++] = v;
  }

  f32(v: number): void {
    this.room(4);
    new DataView(this.bytes.buffer).setFloat32(this.pos, v, true);
    this.pos += 4;
  }

  raw(b: Uint8Array): void {
    this.room(b.length);
    this.bytes.set(b, this.pos);
    this.pos += b.length;
  }

  finish(): Uint8Array {
    return this.bytes.subarray(0, this.pos);
  }

  private room(n: number): void {
    if (this.pos + n <= this.bytes.length) return;
    const next = new Uint8Array(Math.max(this.bytes.length * 2, this.pos + n));
    next.set(this.bytes);
    this.bytes = next;
  }
}

export class ByteReader {
  constructor(
    readonly bytes: Uint8Array,
    public pos = 0,
  ) {}

  private need(n: number, what: string): void {
    if (this.pos + n > this.bytes.length) throw new Error(`${what}: ends early`);
  }

  u8(what: string): number {
    this.need(1, what);
    return this.bytes[this.pos++];
  }

  varint(what: string): number {
    let v = 0;
    let scale = 1;
    for (;;) {
      const b = this.u8(what);
      v += (b & 0x7f) * scale;
      if (b < 0x80) break;
      scale *= 0x80;
      if (scale > 2 ** 49) throw new Error(`${what}: varint longer than 8 bytes`);
    }
    return v;
  }

  f32(what: string): number {
    this.need(4, what);
    const v = new DataView(this.bytes.buffer, this.bytes.byteOffset).getFloat32(this.pos, true);
    this.pos += 4;
    return v;
  }

  raw(n: number, what: string): Uint8Array {
    this.need(n, what);
    const b = this.bytes.subarray(this.pos, this.pos + n);
    this.pos += n;
    return b;
  }
}
