/**
 * JSON Schema of scenario files, for editors (completion, hover units, red squiggles). Generated
 * from the same zod schema the parser uses, describing the input form (defaults optional).
 * Refinements that cross fields (buck vs halfBridge section, dead time vs period, known parts'
 * merged values) are not expressible here; `lossdial check` remains the authority.
 */
import { z } from 'zod';
import { PARTS } from './parts.ts';
import { scenarioSchema } from './schema.ts';
import { unitOf } from './units.ts';

type JsonNode = Record<string, unknown>;

function isNode(v: unknown): v is JsonNode {
  return v !== null && typeof v === 'object' && !Array.isArray(v);
}

/** Add the SI unit read off each field name to its description, so editors show it on hover. */
function annotateUnits(node: unknown): void {
  if (Array.isArray(node)) {
    for (const n of node) annotateUnits(n);
    return;
  }
  if (!isNode(node)) return;
  const props = node.properties;
  if (isNode(props)) {
    for (const [name, field] of Object.entries(props)) {
      const unit = unitOf(name);
      if (unit && isNode(field)) {
        const d = typeof field.description === 'string' ? field.description : '';
        field.description = d ? `${d} (unit: ${unit})` : `unit: ${unit}`;
      }
    }
  }
  for (const v of Object.values(node)) annotateUnits(v);
}

export function scenarioJsonSchema(): JsonNode {
  const schema = z.toJSONSchema(scenarioSchema, { io: 'input', unrepresentable: 'any' }) as JsonNode;
  annotateUnits(schema);
  const devices = (schema.properties as JsonNode).devices as JsonNode;
  for (const side of ['highSide', 'lowSide']) {
    const part = (((devices.properties as JsonNode)[side] as JsonNode).properties as JsonNode).part as JsonNode;
    part.enum = Object.keys(PARTS);
    part.description = 'device from the library of invented parts; any other device field overrides the part value';
  }
  return {
    $schema: schema.$schema,
    title: 'lossdial scenario',
    description: 'A lossdial scenario file (YAML or JSON). SI units, with the unit in each field name.',
    ...Object.fromEntries(Object.entries(schema).filter(([k]) => k !== '$schema')),
  };
}
