/**
 * The part of d3-scale 4 that the drawing code uses (the package ships no type declarations, and the
 * project takes one charting dependency only, so no @types package).
 */
declare module "d3-scale" {
  export interface ContinuousScale {
    (value: number): number;
    domain(): number[];
    domain(domain: readonly number[]): this;
    range(): number[];
    range(range: readonly number[]): this;
    invert(value: number): number;
    ticks(count?: number): number[];
    tickFormat(count?: number, specifier?: string): (d: number) => string;
    nice(count?: number): this;
    clamp(clamp: boolean): this;
    copy(): this;
  }
  export function scaleLinear(): ContinuousScale;
  export function scaleLog(): ContinuousScale;
}
