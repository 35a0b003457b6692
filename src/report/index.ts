export * from './contract.ts';
export { renderTable } from './table.ts';
