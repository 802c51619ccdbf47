package org.lungflag.sandbox.scenario;

import java.util.Arrays;

/**
 * A value over clinical hours, given as key frames {@code hour, value, hour, value, ...}: either linear between
 * frames ({@link #linear}) or a step function that holds each value until the next frame ({@link #steps}, for
 * ventilator settings that someone changes). Before the first frame the first value holds, after the last the last.
 */
final class Curve {

    private final double[] hours;
    private final double[] values;
    private final boolean stepped;

    private Curve(double[] frames, boolean stepped) {
        if (frames.length < 2 || frames.length % 2 != 0) {
            throw new IllegalArgumentException(
                    "key frames come in pairs of hour and value: " + Arrays.toString(frames));
        }
        hours = new double[frames.length / 2];
        values = new double[frames.length / 2];
        for (int i = 0; i < hours.length; i++) {
            hours[i] = frames[2 * i];
            values[i] = frames[2 * i + 1];
            if (i > 0 && hours[i] <= hours[i - 1]) {
                throw new IllegalArgumentException("key frame hours must increase: " + Arrays.toString(frames));
            }
        }
        this.stepped = stepped;
    }

    static Curve linear(double... frames) {
        return new Curve(frames, false);
    }

    static Curve steps(double... frames) {
        return new Curve(frames, true);
    }

    static Curve constant(double value) {
        return new Curve(new double[] {0, value}, true);
    }

    double at(double hour) {
        if (hour <= hours[0]) {
            return values[0];
        }
        for (int i = 1; i < hours.length; i++) {
            if (hour < hours[i]) {
                if (stepped) {
                    return values[i - 1];
                }
                double f = (hour - hours[i - 1]) / (hours[i] - hours[i - 1]);
                return values[i - 1] + f * (values[i] - values[i - 1]);
            }
        }
        return values[values.length - 1];
    }
}
