/**
 * The envelope of a set of points: the least and greatest x and y. With no points x0 = y0 = +Infinity and
 * x1 = y1 = −Infinity; a NaN coordinate makes its side NaN (Math.min/Math.max), which callers' range checks refuse.
 */
export function pointEnvelope(x: ArrayLike<number>, y: ArrayLike<number>): { x0: number; x1: number; y0: number; y1: number } {
  let x0 = Infinity,
    x1 = -Infinity,
    y0 = Infinity,
    y1 = -Infinity;
  for (let i = 0; i < x.length; i++) {
    x0 = Math.min(x0, x[i]);
    x1 = Math.max(x1, x[i]);
    y0 = Math.min(y0, y[i]);
    y1 = Math.max(y1, y[i]);
  }
  return { x0, x1, y0, y1 };
}
