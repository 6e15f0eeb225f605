/** Offset ↔ line/character conversion (UTF-16, 0-based lines and characters, as in LSP). CRLF and LF both end lines. */

export interface Position {
  line: number;
  character: number;
}

export class LineIndex {
  private readonly starts: number[];

  constructor(private readonly text: string) {
    const starts = [0];
    for (let i = 0; i < text.length; i++) {
      const ch = text.charCodeAt(i);
      if (ch === 13 /* \r */) {
        if (text.charCodeAt(i + 1) === 10) i++;
        starts.push(i + 1);
      } else if (ch === 10 /* \n */) {
        starts.push(i + 1);
      }
    }
    this.starts = starts;
  }

  positionAt(offset: number): Position {
    const o = Math.max(0, Math.min(offset, this.text.length));
    let lo = 0;
    let hi = this.starts.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (this.starts[mid]! <= o) lo = mid;
      else hi = mid - 1;
    }
    return { line: lo, character: o - this.starts[lo]! };
  }

  offsetAt(pos: Position): number {
    if (pos.line < 0) return 0;
    if (pos.line >= this.starts.length) return this.text.length;
    const start = this.starts[pos.line]!;
    let end = pos.line + 1 < this.starts.length ? this.starts[pos.line + 1]! : this.text.length;
    // A character past the line's end means the end of its text, before the line break (as in LSP), not
    // the start of the next line.
    if (end > start && this.text.charCodeAt(end - 1) === 10) end--;
    if (end > start && this.text.charCodeAt(end - 1) === 13) end--;
    return Math.max(start, Math.min(start + Math.max(0, pos.character), end));
  }

  get lineCount(): number {
    return this.starts.length;
  }
}
