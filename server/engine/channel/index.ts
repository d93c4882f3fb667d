// Channel errors: a binary symmetric channel over the raw payload, the decoder of what arrives, the closed-form
// expected distortion, and index assignment by binary switching. Pure: it reads and writes no files.
export { flipBits } from './bsc';
export { channelDistortion, expectedErrorTerms, expectedSquaredError, usagePrior } from './expected';
export { assignIndices, type IndexAssignment } from './index-assignment';
export { BER, CHANNEL_SEEDS, DEFAULT_BERS, DEFAULT_REORDER_BER, EXPECTED_MAX_BITS, MAX_BERS, REORDER_MAX_BITS, REORDER_MIN_GAIN, STUDIO_REORDER_MAX_BITS } from './limits';
export { decodeDamaged, simulateChannel, type ChannelCurve, type ChannelImage, type ChannelPoint, type ChannelSimulationOptions } from './simulate';
export { concealIndex, popcount, transitionByDistance } from './transition';
