// CSV matrix writer: metadata columns first, then one column per axis value (the layout the
// spectrum parser and the `lotgate` command line read).

export function writeCsvMatrix(
	metaColumns: readonly string[],
	axis: ArrayLike<number>,
	rows: readonly { meta: Record<string, string>; values: ArrayLike<number> }[],
	decimals: number
): string {
	const quote = (s: string) => (/[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
	const lines = [[...metaColumns, ...Array.from(axis, (x) => String(+x.toFixed(6)))].join(',')];
	for (const r of rows) lines.push([...metaColumns.map((c) => quote(r.meta[c] ?? '')), ...Array.from(r.values, (v) => v.toFixed(decimals))].join(','));
	return `${lines.join('\n')}\n`;
}
