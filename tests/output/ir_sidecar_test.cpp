// Reader of IR sidecars: keys of ir_writer.h, azimuth of the source, errors.
#include "hallwright/ir_sidecar.h"

#include <cmath>

#include <gtest/gtest.h>

#include "test_support.h"

namespace hw = hallwright;

TEST(IrSidecar, ReadsKeysAndSourceAzimuth) {
    // Model frame y up, listener facing -z: the listener's left is up x facing = y x (-z) = -x,
    // so a source toward -x is at +90 deg (AmbiX azimuth, counter-clockwise, REFERENCES §7.1).
    const std::string text = R"({"format":"hallwright-ir-sidecar","version":1,
        "channel_layout":"ambix-acn-sn3d","reference_energy":7.9577e-4,
        "source":{"name":"S1","position":[0,1,0]},
        "seat":{"name":"A1","zone":"stalls","facing":[0,0,-1],"position":[0,1,5]},
        "source_direction":[-1,0,0],"up":[0,1,0],"unknown_key":3})";
    hw::Diagnostics diag;
    auto s = hw::ParseIrSidecar(text, "x.wav.json", diag);
    ASSERT_TRUE(s) << diag.ToString();
    EXPECT_NEAR(*s->referenceEnergy, 7.9577e-4, 1e-12);
    EXPECT_EQ(*s->layout, hw::ChannelLayout::kAmbix);
    EXPECT_EQ(s->sourceName, "S1");
    EXPECT_EQ(s->seatName, "A1");
    EXPECT_EQ(s->zone, "stalls");
    EXPECT_NEAR(*s->sourceAzimuthDeg, 90.0, 1e-9);  // AmbiX: +90 deg = left
}

TEST(IrSidecar, MalformedIsAnErrorNamingTheFile) {
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::ParseIrSidecar("{\"reference_energy\": -1}", "bad.wav.json", diag));
    EXPECT_NE(diag.ToString().find("bad.wav.json"), std::string::npos);
    hw::Diagnostics d2;
    EXPECT_FALSE(hw::ParseIrSidecar("{not json", "junk.wav.json", d2));
    EXPECT_NE(d2.ToString().find("junk.wav.json"), std::string::npos);
}

TEST(IrSidecar, AbsentIsNotAnError) {
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::ReadIrSidecar(hw::test::TempDir("sidecar_absent") + "/none.wav", diag));
    EXPECT_FALSE(diag.HasErrors());
}

// A z-up model (scene_frame.cpp): a listener facing +x with the source ahead and 2 m above
// (direction (5, 0, 2)/sqrt(29)). Projected on the plane normal to the true up axis z the
// source is straight ahead, azimuth 0. Without "up" the reader guesses the axis least present
// in both vectors, y here (0 against 0.37), and says so in the note.
TEST(IrSidecar, UpKeyGivesTheAzimuthAboutTheModelVertical) {
    const std::string body = R"("channel_layout":"ambix-acn-sn3d",
        "seat":{"name":"ahead","facing":[1,0,0]},"source_direction":[0.928476690885259,0,0.371390676354104])";
    hw::Diagnostics diag;
    auto withUp = hw::ParseIrSidecar("{" + body + R"(,"up":[0,0,1]})", "up.wav.json", diag);
    ASSERT_TRUE(withUp) << diag.ToString();
    ASSERT_TRUE(withUp->sourceAzimuthDeg);
    EXPECT_NEAR(*withUp->sourceAzimuthDeg, 0.0, 1e-9);
    EXPECT_TRUE(withUp->azimuthNote.empty()) << withUp->azimuthNote;

    // The same vectors, up axis not given: the guess and its note.
    auto guessed = hw::ParseIrSidecar("{" + body + "}", "old.wav.json", diag);
    ASSERT_TRUE(guessed) << diag.ToString();
    ASSERT_TRUE(guessed->sourceAzimuthDeg);
    EXPECT_NE(guessed->azimuthNote.find("no \"up\" key"), std::string::npos) << guessed->azimuthNote;

    // A source on the listener's left in that frame: left = up x facing = z x x = +y, so
    // direction +y (raised) is azimuth +90 deg (AmbiX, counter-clockwise; REFERENCES §7.1).
    auto left = hw::ParseIrSidecar(R"({"seat":{"facing":[1,0,0]},"source_direction":[0,0.8,0.6],"up":[0,0,1]})",
                                   "left.wav.json", diag);
    ASSERT_TRUE(left && left->sourceAzimuthDeg) << diag.ToString();
    EXPECT_NEAR(*left->sourceAzimuthDeg, 90.0, 1e-9);
    EXPECT_FALSE(diag.HasErrors());
}

TEST(IrSidecar, MalformedUpIsAnErrorNamingTheFile) {
    for (const char* up : {"[0,0,0]", "[0,1]", "\"z\""}) {
        hw::Diagnostics diag;
        const std::string text = std::string(R"({"seat":{"facing":[1,0,0]},"source_direction":[0,1,0],"up":)") + up + "}";
        EXPECT_FALSE(hw::ParseIrSidecar(text, "bad-up.wav.json", diag)) << up;
        EXPECT_NE(diag.ToString().find("bad-up.wav.json"), std::string::npos) << diag.ToString();
        EXPECT_NE(diag.ToString().find("\"up\""), std::string::npos) << diag.ToString();
    }
}
