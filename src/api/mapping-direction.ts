import { InputError } from '../errors.js';
import { IGNORE_FIELD } from '../ingest/mapping.js';

/**
 * The screens hold a mapping as field → column (one choice per field, as the mapping form shows
 * it); the importer and the saved mappings use column → field (as `--map col=field`). These two
 * functions turn one into the other at the API boundary.
 */
export function toCoreMapping(fieldToColumn: Record<string, string>): Record<string, string> {
  const columnToField: Record<string, string> = {};
  for (const [field, column] of Object.entries(fieldToColumn)) {
    const taken = columnToField[column];
    if (taken !== undefined) {
      throw new InputError(`mapping: column "${column}" is chosen for both ${taken} and ${field}; choose one column per field.`, {
        issues: [{ path: `mapping.${field}`, message: `column "${column}" is already used for ${taken}` }],
      });
    }
    columnToField[column] = field;
  }
  return columnToField;
}

export function toScreenMapping(columnToField: Record<string, string>): Record<string, string> {
  const fieldToColumn: Record<string, string> = {};
  for (const [column, field] of Object.entries(columnToField)) {
    if (field !== IGNORE_FIELD) fieldToColumn[field] = column;
  }
  return fieldToColumn;
}
