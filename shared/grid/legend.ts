import { z } from 'zod';

/**
 * A legend a client can draw without knowing the product: a continuous ramp over [min, max] in `units`, or classes
 * (a value, its label and colour). Colours are CSS hex strings (#rrggbb). `note`: a sentence shown under it (e.g.
 * where the layer has no data and why).
 */
const note = z.string().optional();
export const legendSchema = z.discriminatedUnion('type', [
  z.object({ type: z.literal('ramp'), units: z.string(), min: z.number(), max: z.number(), colors: z.array(z.string()), note }),
  z.object({ type: z.literal('classes'), units: z.string(), classes: z.array(z.object({ value: z.number(), label: z.string(), color: z.string() })), note }),
]);
export type Legend = z.infer<typeof legendSchema>;
