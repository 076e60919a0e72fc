// Cautions that belong to a kind of unit, shown on the job, the bench and the worksheets. The
// pages add the usual reminder that local codes and licensed practice come first.
import type { UnitCategory } from './schemas/enums';

export const UNIT_CAUTIONS: Partial<Record<UnitCategory, { title: string; items: string[] }>> = {
	'valve-amplifier': {
		title: 'Valve amplifier: lethal voltages',
		items: [
			'B+ supplies run at hundreds of volts and the filter capacitors hold that charge long after switch-off: discharge them through a suitable resistor and measure before you touch anything inside.',
			'Never run it without a load on the output transformer: a speaker or a dummy load of the rated impedance, connected before power is applied.',
			'Bias is set in mA per valve, one valve at a time, against the service manual’s figure.'
		]
	}
};

export function unitCautions(category: string): { title: string; items: string[] } | null {
	return UNIT_CAUTIONS[category as UnitCategory] ?? null;
}

/** Bias on a valve amplifier is read in mA per valve; on solid-state units in mV across an emitter resistor. */
export function biasInMilliampsPerValve(category: string): boolean {
	return category === 'valve-amplifier';
}
