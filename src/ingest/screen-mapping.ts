import { InputError } from '../errors.js';
import { IGNORE_FIELD, type ColumnMapping } from './mapping.js';

/**
 * The screens (and the contract) hold a mapping as field → column (one choice per field, as the
 * mapping form shows it) plus the columns to leave out; the importer and the saved mappings use
 * column → field (as `--map col=field`, `--map col=ignore`). These two functions turn one into
 * the other.
 */
export function toCoreMapping(fieldToColumn: Record<string, string>, ignoreColumns: readonly string[] = []): ColumnMapping {
  const columnToField: ColumnMapping = {};
  const take = (column: string, field: string, path: string) => {
    const taken = columnToField[column];
    if (taken !== undefined) {
      throw new InputError(`mapping: column "${column}" is chosen for both ${taken} and ${field}; choose one column per field.`, {
        issues: [{ path, message: `column "${column}" is already used for ${taken}` }],
      });
    }
    columnToField[column] = field;
  };
  for (const [field, column] of Object.entries(fieldToColumn)) take(column, field, `mapping.${field}`);
  ignoreColumns.forEach((column, i) => take(column, IGNORE_FIELD, `ignoreColumns.${i}`));
  return columnToField;
}

export function toScreenMapping(columnToField: ColumnMapping): Record<string, string> {
  const fieldToColumn: Record<string, string> = {};
  for (const [column, field] of Object.entries(columnToField)) {
    if (field !== IGNORE_FIELD) fieldToColumn[field] = column;
  }
  return fieldToColumn;
}
