import { describe, expect, it } from "vitest";
import { FacetwiseError } from "../../src/errors.ts";
import { defaultSettings, parseSettings } from "../../src/model/index.ts";

describe("page settings", () => {
  it("fills every default from the contract's settings table", () => {
    // Values from the settings table of the project contract (not an outside source), except the
    // simulator-tuned values (segmentSpread, explorationFloor, baselineShare, prior scales) and the
    // added segmentInterceptSpread, thompsonScale and the unsettle bars (issue 10) — see the doc comment of settings.ts for the runs behind them.
    expect(parseSettings({})).toEqual({
      attributionWindowHours: 24, assignmentHours: 720, foldIntervalSeconds: 3600, explorationFloor: 0.01,
      baselineShare: 0.01, settleProbability: 0.95, settleLossFraction: 0.01,
      unsettleProbability: 0.9, unsettleLossFraction: 0.015, retireProbability: 0.001,
      retireAfterFolds: 3, halfLifeDays: null, segmentSpread: 0.1, segmentInterceptSpread: 1, priorInterceptMean: -3, priorInterceptScale: 2,
      priorMainScale: 0.25, priorInteractionScale: 0.1, thompsonScale: 0.6, samples: 1000, maxSegments: 200,
      // public-route rate limits (issue 11): our own choice, common practice, no source
      addressRequestsPerMinute: 120, pageRequestsPerMinute: 60_000,
    });
    expect(parseSettings(undefined)).toEqual(defaultSettings);
    expect(parseSettings({ halfLifeDays: 3 }).halfLifeDays).toBe(3);
  });

  it("rejects bad values and unknown names with INVALID_SETTING naming the field", () => {
    const cases: [unknown, string][] = [
      [{ explorationFloor: 1.5 }, "explorationFloor"],
      [{ thompsonScale: 0 }, "thompsonScale"],
      [{ thompsonScale: 1.2 }, "thompsonScale"],
      [{ baselineShare: -0.1 }, "baselineShare"],
      [{ samples: 10.5 }, "samples"],
      [{ retireAfterFolds: 0 }, "retireAfterFolds"],
      [{ halfLifeDays: 0 }, "halfLifeDays"],
      [{ priorMainScale: "big" }, "priorMainScale"],
      [{ halflifeDays: 3 }, "halflifeDays"],
    ];
    for (const [input, field] of cases) {
      try {
        parseSettings(input);
        throw new Error("expected INVALID_SETTING");
      } catch (error) {
        expect(error).toBeInstanceOf(FacetwiseError);
        expect((error as FacetwiseError).code).toBe("INVALID_SETTING");
        expect((error as FacetwiseError).field).toBe(field);
        expect((error as FacetwiseError).message).toContain(field);
      }
    }
  });
});
