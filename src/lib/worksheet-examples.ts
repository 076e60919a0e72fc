// Filled-in worksheets with invented but plausible figures: the demo seed and the tests start
// from these, so a sheet that satisfies the rules is written once.
import {
	emptySheet,
	type BiasChannel,
	type IntakeSheet,
	type PowerUpSheet,
	type SafetySheet
} from './schemas/worksheets';

export function intakeExample(over: Partial<IntakeSheet> = {}): IntakeSheet {
	return {
		...emptySheet('intake'),
		mainsSettingVoltsRms: 230,
		fuseFound: 'T3.15A 5×20 mm glass',
		knobsPresent: true,
		coversPresent: true,
		accessories: 'None',
		asReceived: 'working-with-faults',
		customerSpeakerOhms: 8,
		diagnosisFeeAuthorised: true,
		...over
	};
}

/** A three-step current-limited start on a variable transformer to 230 V. */
export function powerUpExample(over: Partial<PowerUpSheet> = {}): PowerUpSheet {
	return {
		method: 'both',
		lampWatts: 60,
		reformingMinutes: 45,
		steps: [
			{
				mainsVoltsRms: 60,
				currentMilliamps: 38,
				powerWatts: null,
				railVolts: [11.2, -11.4],
				holdSeconds: 900,
				observed: 'Lamp dim glow, settled'
			},
			{
				mainsVoltsRms: 150,
				currentMilliamps: 72,
				powerWatts: null,
				railVolts: [28.9, -29.1],
				holdSeconds: 1200,
				observed: 'No smell, no hum'
			},
			{
				mainsVoltsRms: 230,
				currentMilliamps: 118,
				powerWatts: 24,
				railVolts: [44.6, -44.9],
				holdSeconds: 1800,
				observed: 'Lamp dark, rails steady'
			}
		],
		finished: true,
		notes: '',
		...over
	};
}

export function biasChannelExample(label: string, over: Partial<BiasChannel> = {}): BiasChannel {
	return {
		label,
		measuredAt: label === 'L' ? 'R715 (0.22 Ω)' : 'R716 (0.22 Ω)',
		biasMillivolts: { target: 15, asFound: 6.1, setCold: 14.8, warm: 15.9, afterSoak: null },
		biasMilliamps: null,
		offsetMillivolts: { cold: 4.2, warm: 7.9 },
		...over
	};
}

/** Every item recorded and passed on an earthed (class I) unit. */
export function passedSafetySheet(over: Partial<SafetySheet> = {}): SafetySheet {
	const meter = 'Appliance tester PT-2 #114';
	return {
		earthed: true,
		earthContinuity: { result: 'pass', earthOhms: 0.08, instrument: meter, note: '' },
		insulation: { result: 'pass', insulationMegohms: 200, instrument: meter, note: '500 V DC' },
		leakage: { result: 'n-a', leakageMilliamps: null, instrument: '', note: '' },
		mainsCapacitors: { result: 'pass', action: 'replaced', instrument: 'Visual', note: 'X2 0.1 µF fitted' },
		fuseRating: { result: 'pass', fuseAmps: 3.15, instrument: 'Visual', note: 'T3.15A as rated' },
		mainsCord: { result: 'pass', instrument: 'Visual and tug test', note: '' },
		...over
	};
}
