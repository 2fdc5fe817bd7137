/**
 * The adaptive arithmetic coder and integer compressor of the LAZ format,
 * enough to read and write a LAZ chunk table. The coder is a range coder with
 * 32-bit state in the style of Said & Pearlman's fast arithmetic coder
 * (A. Said, "Fast arithmetic coding in FastAC", 2004) as the LAZ format uses it
 * (Isenburg 2013, "LASzip: lossless compression of LiDAR data", PE&RS 79(2)).
 * All state is unsigned 32-bit, kept in JS numbers with `>>> 0`.
 */
import { CrowntallyError } from '../errors.js';

const AC_MIN_LENGTH = 0x01000000;
const AC_MAX_LENGTH = 0xffffffff;
const BM_LENGTH_SHIFT = 13;
const BM_MAX_COUNT = 1 << BM_LENGTH_SHIFT;
const DM_LENGTH_SHIFT = 15;
const DM_MAX_COUNT = 1 << DM_LENGTH_SHIFT;

/** Adaptive binary model. */
export class BitModel {
  bit0Count = 1;
  bitCount = 2;
  bit0Prob = 1 << (BM_LENGTH_SHIFT - 1);
  updateCycle = 4;
  bitsUntilUpdate = 4;
  update(): void {
    if ((this.bitCount += this.updateCycle) > BM_MAX_COUNT) {
      this.bitCount = (this.bitCount + 1) >>> 1;
      this.bit0Count = (this.bit0Count + 1) >>> 1;
      if (this.bit0Count === this.bitCount) ++this.bitCount;
    }
    const scale = Math.floor(0x80000000 / this.bitCount);
    this.bit0Prob = (this.bit0Count * scale) >>> (31 - BM_LENGTH_SHIFT);
    this.updateCycle = (5 * this.updateCycle) >>> 2;
    if (this.updateCycle > 64) this.updateCycle = 64;
    this.bitsUntilUpdate = this.updateCycle;
  }
}

/** Adaptive multi-symbol model (2..2048 symbols). Decoding searches the distribution directly. */
export class SymbolModel {
  readonly symbols: number;
  readonly lastSymbol: number;
  readonly distribution: Uint32Array;
  readonly symbolCount: Uint32Array;
  totalCount = 0;
  updateCycle: number;
  symbolsUntilUpdate: number;
  constructor(symbols: number) {
    if (symbols < 2 || symbols > 2048) throw new CrowntallyError('INTERNAL', `symbol model size ${symbols} out of range`);
    this.symbols = symbols;
    this.lastSymbol = symbols - 1;
    this.distribution = new Uint32Array(symbols);
    this.symbolCount = new Uint32Array(symbols).fill(1);
    this.updateCycle = symbols;
    this.symbolsUntilUpdate = 0;
    this.update();
    this.symbolsUntilUpdate = this.updateCycle = (symbols + 6) >>> 1;
  }
  update(): void {
    const n = this.symbols;
    const cnt = this.symbolCount;
    if ((this.totalCount += this.updateCycle) > DM_MAX_COUNT) {
      this.totalCount = 0;
      for (let k = 0; k < n; k++) this.totalCount += (cnt[k] = (cnt[k]! + 1) >>> 1);
    }
    const scale = Math.floor(0x80000000 / this.totalCount);
    let sum = 0;
    for (let k = 0; k < n; k++) {
      this.distribution[k] = (scale * sum) >>> (31 - DM_LENGTH_SHIFT);
      sum += cnt[k]!;
    }
    this.updateCycle = (5 * this.updateCycle) >>> 2;
    const maxCycle = (n + 6) << 3;
    if (this.updateCycle > maxCycle) this.updateCycle = maxCycle;
    this.symbolsUntilUpdate = this.updateCycle;
  }
}

export class ArithmeticDecoder {
  private value = 0;
  private length = AC_MAX_LENGTH;
  private pos: number;
  constructor(private readonly bytes: Uint8Array, start = 0) {
    this.pos = start;
    this.value = ((this.byte() << 24) | (this.byte() << 16) | (this.byte() << 8) | this.byte()) >>> 0;
  }
  /** Bytes consumed so far (past the end reads as zeros). */
  get position(): number { return this.pos; }
  private byte(): number {
    return this.pos < this.bytes.length ? this.bytes[this.pos++]! : (this.pos++, 0);
  }
  private renorm(): void {
    do {
      this.value = ((this.value << 8) | this.byte()) >>> 0;
      this.length = (this.length << 8) >>> 0;
    } while (this.length < AC_MIN_LENGTH);
  }
  decodeBit(m: BitModel): number {
    const x = (m.bit0Prob * (this.length >>> BM_LENGTH_SHIFT)) >>> 0;
    let sym: number;
    if (this.value < x) { sym = 0; this.length = x; ++m.bit0Count; }
    else { sym = 1; this.value = (this.value - x) >>> 0; this.length = (this.length - x) >>> 0; }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    if (--m.bitsUntilUpdate === 0) m.update();
    return sym;
  }
  decodeSymbol(m: SymbolModel): number {
    let y = this.length;
    let x = 0, sym = 0;
    this.length = this.length >>> DM_LENGTH_SHIFT;
    let n = m.symbols;
    let k = n >>> 1;
    const d = m.distribution;
    do {
      const z = (this.length * d[k]!) >>> 0;
      if (z > this.value) { n = k; y = z; } else { sym = k; x = z; }
    } while ((k = (sym + n) >>> 1) !== sym);
    this.value = (this.value - x) >>> 0;
    this.length = (y - x) >>> 0;
    if (this.length < AC_MIN_LENGTH) this.renorm();
    ++m.symbolCount[sym]!;
    if (--m.symbolsUntilUpdate === 0) m.update();
    return sym;
  }
  readShort(): number {
    this.length = this.length >>> 16;
    const sym = Math.floor(this.value / this.length);
    this.value = (this.value - this.length * sym) >>> 0;
    if (this.length < AC_MIN_LENGTH) this.renorm();
    return sym;
  }
  readBits(bits: number): number {
    if (bits > 19) {
      const lo = this.readShort();
      return ((this.readBits(bits - 16) << 16) | lo) >>> 0;
    }
    this.length = this.length >>> bits;
    const sym = Math.floor(this.value / this.length);
    this.value = (this.value - this.length * sym) >>> 0;
    if (this.length < AC_MIN_LENGTH) this.renorm();
    return sym;
  }
}

export class ArithmeticEncoder {
  private base = 0;
  private length = AC_MAX_LENGTH;
  private out = new Uint8Array(256);
  private n = 0;
  private put(b: number): void {
    if (this.n === this.out.length) { const o = new Uint8Array(this.out.length * 2); o.set(this.out); this.out = o; }
    this.out[this.n++] = b;
  }
  private carry(): void {
    let i = this.n - 1;
    while (i >= 0 && this.out[i] === 0xff) { this.out[i] = 0; i--; }
    if (i >= 0) this.out[i]!++;
  }
  private addBase(x: number): void {
    const b = this.base + x;
    if (b > 0xffffffff) { this.base = b - 0x100000000; this.carry(); } else this.base = b;
  }
  private renorm(): void {
    do {
      this.put(this.base >>> 24);
      this.base = (this.base << 8) >>> 0;
      this.length = (this.length << 8) >>> 0;
    } while (this.length < AC_MIN_LENGTH);
  }
  encodeBit(m: BitModel, bit: number): void {
    const x = (m.bit0Prob * (this.length >>> BM_LENGTH_SHIFT)) >>> 0;
    if (bit === 0) { this.length = x; ++m.bit0Count; }
    else { this.addBase(x); this.length = (this.length - x) >>> 0; }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    if (--m.bitsUntilUpdate === 0) m.update();
  }
  encodeSymbol(m: SymbolModel, sym: number): void {
    const d = m.distribution;
    if (sym === m.lastSymbol) {
      const x = (d[sym]! * (this.length >>> DM_LENGTH_SHIFT)) >>> 0;
      this.addBase(x);
      this.length = (this.length - x) >>> 0;
    } else {
      this.length = this.length >>> DM_LENGTH_SHIFT;
      const x = (d[sym]! * this.length) >>> 0;
      this.addBase(x);
      this.length = (d[sym + 1]! * this.length - x) >>> 0;
    }
    if (this.length < AC_MIN_LENGTH) this.renorm();
    ++m.symbolCount[sym]!;
    if (--m.symbolsUntilUpdate === 0) m.update();
  }
  writeShort(sym: number): void {
    this.length = this.length >>> 16;
    this.addBase(sym * this.length);
    if (this.length < AC_MIN_LENGTH) this.renorm();
  }
  writeBits(bits: number, sym: number): void {
    if (bits > 19) { this.writeShort(sym & 0xffff); sym = sym >>> 16; bits -= 16; }
    this.length = this.length >>> bits;
    this.addBase(sym * this.length);
    if (this.length < AC_MIN_LENGTH) this.renorm();
  }
  /** Flushes the interval and returns the coded bytes. */
  finish(): Uint8Array {
    let another = true;
    if (this.length > 2 * AC_MIN_LENGTH) { this.addBase(AC_MIN_LENGTH); this.length = AC_MIN_LENGTH >>> 1; }
    else { this.addBase(AC_MIN_LENGTH >>> 1); this.length = AC_MIN_LENGTH >>> 9; another = false; }
    this.renorm();
    // Trailing zeros keep the decoder's 4-byte look-ahead inside the coded bytes.
    this.put(0); this.put(0);
    if (another) this.put(0);
    return this.out.slice(0, this.n);
  }
}

/**
 * Integer compressor with 32-bit corrections: a correction c = real - pred is
 * coded as its bit length k (a symbol per context), then the value within that
 * length (low 8 bits by a model, higher bits raw), as in the LAZ format.
 */
export class IntegerCoder {
  private readonly kModels: SymbolModel[];
  private readonly bit0 = new BitModel();
  private readonly corr: SymbolModel[] = [];
  private static readonly BITS_HIGH = 8;
  constructor(contexts: number) {
    this.kModels = Array.from({ length: contexts }, () => new SymbolModel(33));
    for (let i = 1; i <= 32; i++) this.corr[i] = new SymbolModel(1 << Math.min(i, IntegerCoder.BITS_HIGH));
  }
  decode(dec: ArithmeticDecoder, pred: number, context: number): number {
    const k = dec.decodeSymbol(this.kModels[context]!);
    let c: number;
    if (k === 0) c = dec.decodeBit(this.bit0);
    else if (k < 32) {
      if (k <= IntegerCoder.BITS_HIGH) c = dec.decodeSymbol(this.corr[k]!);
      else {
        const k1 = k - IntegerCoder.BITS_HIGH;
        const hi = dec.decodeSymbol(this.corr[k]!);
        c = ((hi << k1) | dec.readBits(k1)) >>> 0;
      }
      // k >= 1: c in [0, 2^k) maps to [-(2^k - 1), -2^(k-1)] U [2^(k-1) + 1, 2^k].
      const half = 2 ** (k - 1);
      c = c >= half ? c + 1 : c - (2 ** k - 1);
    } else c = -0x80000000;
    return (pred + c) | 0;
  }
  encode(enc: ArithmeticEncoder, pred: number, real: number, context: number): void {
    const c = (real - pred) | 0;
    let c1 = c <= 0 ? -c : c - 1;
    let k = 0;
    while (c1) { c1 = Math.floor(c1 / 2); k++; }
    enc.encodeSymbol(this.kModels[context]!, k);
    if (k === 0) { enc.encodeBit(this.bit0, c); return; }
    if (k >= 32) return;
    let v = c < 0 ? c + (2 ** k - 1) : c - 1;
    if (k <= IntegerCoder.BITS_HIGH) enc.encodeSymbol(this.corr[k]!, v);
    else {
      const k1 = k - IntegerCoder.BITS_HIGH;
      const lo = v % (2 ** k1);
      v = Math.floor(v / 2 ** k1);
      enc.encodeSymbol(this.corr[k]!, v);
      enc.writeBits(k1, lo);
    }
  }
}
