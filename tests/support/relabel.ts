// A container file as an instrument would write it for one particular lot: the JCAMP-DX title names that lot and
// container. Tests that receive a demo delivery as a new lot use it, so the bytes are the lot's own (identical bytes
// are refused site-wide as evidence) and the header agrees with where the file is uploaded.
export function forLot(bytes: Uint8Array, label: { material?: string; supplierLot: string; container: number }): Uint8Array {
	const text = Buffer.from(bytes).toString('latin1');
	const title = `##TITLE=${label.material ? `${label.material}, ` : ''}lot ${label.supplierLot}, container ${label.container}`;
	if (!/^##TITLE=.*$/m.test(text)) throw new Error('forLot: the file has no ##TITLE line');
	return new Uint8Array(Buffer.from(text.replace(/^##TITLE=.*$/m, title), 'latin1'));
}
