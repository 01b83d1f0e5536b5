// Types for the part of js-yaml the tests use (the package ships none): test/main/packaging.test.ts reads
// electron-builder.yml with it.
declare module 'js-yaml' {
  export function load(text: string, options?: { filename?: string; json?: boolean }): unknown;
}
