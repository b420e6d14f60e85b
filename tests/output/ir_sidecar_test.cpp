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
