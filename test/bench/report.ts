export function renderDocs(_: unknown): string { return ''; }
