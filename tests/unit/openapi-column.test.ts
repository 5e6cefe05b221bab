import { describe, expect, it } from 'vitest';
import { openApiDocument } from '../../server/routes/openapi.ts';

// The OpenAPI 3.1 description (OAS 3.1.0, an open standard) documents the column's pore-pressure options and the
// rock-aware solidus shape the answer has.
describe('OpenAPI: /api/column', () => {
  const doc = openApiDocument() as {
    paths: Record<
      string,
      {
        post: {
          requestBody: { content: Record<string, { schema: { oneOf: { properties: Record<string, { description?: string; pattern?: string }> }[] } }> };
          responses: Record<
            string,
            { content: Record<string, { schema?: { properties: Record<string, { properties?: Record<string, unknown>; description?: string }> } }> }
          >;
        };
      }
    >;
  };
  const post = doc.paths['/api/column'].post;
  it('describes porePressure and fluidDensityKgM3 in both request forms', () => {
    for (const form of post.requestBody.content['application/json'].schema.oneOf) {
      expect(form.properties.porePressure.description).toMatch(/hydrostatic.*lambda/);
      expect(new RegExp(form.properties.porePressure.pattern!).test('lambda:0.7')).toBe(true);
      expect(new RegExp(form.properties.porePressure.pattern!).test('lithostatic')).toBe(false);
      expect(form.properties.fluidDensityKgM3.description).toMatch(/kg\/m³/);
    }
  });
  it('gives the answer schema with solidusCrossingKm { wetSolidus, meltOnset } and the pressures per depth', () => {
    const s = post.responses['200'].content['application/json'].schema!;
    expect(Object.keys(s.properties.solidusCrossingKm.properties!)).toEqual(expect.arrayContaining(['wetSolidus', 'meltOnset']));
    expect(s.properties.solidusCrossingKm.description).toMatch(/melt onset/);
    expect(s.properties.porePressure).toBeDefined();
  });
});
