import { z } from 'zod';
import { calendarDate } from '$lib/validation/date';
import { nameText, proseText } from '$lib/validation/text';

// Shared by the form (validation as you type) and the action; the lot service validates again.
export const receiveSchema = z.object({
	material: nameText(z.string().trim().min(1, 'Choose the material')),
	supplier: nameText(z.string().trim().min(1, 'Choose the supplier')),
	supplierLot: nameText(z.string().trim().min(1, "Enter the supplier's lot number").max(80, 'At most 80 characters')),
	containers: z.coerce.number({ invalid_type_error: 'Enter the number of containers' }).int('A whole number').min(1, 'At least 1 container').max(10000, 'At most 10000 containers').default(1),
	receivedAt: calendarDate(),
	plan: z.enum(['every', 'n', 'p', 'r']).default('every'),
	justification: proseText(z.string().trim().max(2000)).default('')
});
