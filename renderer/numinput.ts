// Runs in the renderer. Numeric fields: text inputs with a decimal keypad hint (a number input would turn
// "4,37" into 437 in some browsers and refuse it in others), read by the one parser of app/numbers.ts.
import { parseDecimal, type DecimalRule } from '../app/numbers';
import { h } from './dom';

type Attrs = Parameters<typeof h>[1];

/** A numeric field: `inputmode` decimal (or numeric for whole numbers), no spinner, left to the parser. */
export function numberInput(attrs: Attrs & { value?: string | number }, integer = false): HTMLInputElement {
  const value = attrs?.value;
  return h('input', {
    type: 'text',
    inputmode: integer ? 'numeric' : 'decimal',
    autocomplete: 'off',
    spellcheck: 'false',
    ...attrs,
    value: value === undefined ? undefined : String(value),
  });
}

/** The field's number, or an error naming the field (shown by the caller where the field is). */
export function readNumber(el: HTMLInputElement, field: string, rule: DecimalRule = {}): number {
  try {
    const v = parseDecimal(el.value, field, rule);
    el.removeAttribute('aria-invalid');
    return v;
  } catch (e) {
    el.setAttribute('aria-invalid', 'true');
    throw e;
  }
}
