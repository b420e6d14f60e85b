// Tests of the impulse-response file writer (engine/output/ir_writer.cpp).
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>

#include <nlohmann/json.hpp>

#include "hallwright/ir_sidecar.h"
#include "hallwright/ir_writer.h"
#include "test_support.h"

namespace {

hw::ImpulseResponse SmallIr() {
    hw::ReceiverPaths paths;
    hw::SpecularPath p;
    p.delayS = 0.03;
    p.energy = hw::Bands::Constant(1.0 / (4 * 3.14159265358979 * 100));
    paths.paths.push_back(p);
    hw::ReceiverHistogram h;
    h.binCount = 0;
    hw::SynthesisContext ctx;
    ctx.roomVolumeM3 = 500;
    ctx.lengthS = 0.1;
    return hw::Synthesize(paths, h, ctx);
}

hw::IrFileInfo Info() {
    hw::IrFileInfo info;
    info.sourceName = "Stage A/1";
    info.sourcePosition = hw::Vec3(1, 2, 3);
    info.seatName = "stalls r05 s10";
    info.seatPosition = hw::Vec3(4, 5, 6);
    info.zone = "stalls";
    info.facing = hw::Vec3(0, 0, -1);
    info.sourceDirection = hw::Vec3(-0.6, 0, -0.8);
    info.seed = 42;
    return info;
}

}  // namespace

TEST(IrWriter, WritesMonoWavAndSidecarUnderIrMono) {
    const std::string dir = hw::test::TempDir("ir_writer_mono");
    const hw::ImpulseResponse ir = SmallIr();
    hw::Diagnostics diag;
    const auto rel = hw::WriteImpulseResponseFiles(dir, ir, Info(), hw::WavFormat::kFloat32, diag);
    ASSERT_TRUE(rel) << diag.ToString();
    EXPECT_EQ(*rel, "ir/mono/Stage_A_1__stalls_r05_s10.wav");
    const std::string wavPath = dir + "/" + *rel;
    const auto wav = hw::ReadWav(wavPath, diag);
    ASSERT_TRUE(wav) << diag.ToString();
    EXPECT_EQ(wav->sampleRate, 48000);
    EXPECT_EQ(wav->channels, 1);
    EXPECT_EQ(wav->samples, ir.samples);  // float32 is lossless

    std::ifstream in(wavPath + ".json");
    ASSERT_TRUE(in.good());
    const nlohmann::json j = nlohmann::json::parse(in);
    EXPECT_EQ(j["channel_layout"], "mono");
    EXPECT_EQ(j["sample_rate"], 48000);
    EXPECT_EQ(j["sample_format"], "float32");
    EXPECT_DOUBLE_EQ(j["reference_energy"].get<double>(), hw::GReferenceEnergy());
    EXPECT_FALSE(j["reference_energy_definition"].get<std::string>().empty());
    EXPECT_EQ(j["seed"], 42);
    EXPECT_EQ(j["source"]["name"], "Stage A/1");
    EXPECT_EQ(j["source"]["position"][2], 3.0);
    EXPECT_EQ(j["seat"]["name"], "stalls r05 s10");
    EXPECT_EQ(j["seat"]["zone"], "stalls");
    EXPECT_EQ(j["seat"]["facing"][2], -1.0);
    EXPECT_EQ(j["source_direction"][0], -0.6);
    EXPECT_EQ(j["up"], nlohmann::json::array({0.0, 1.0, 0.0}));  // IrFileInfo's default: internal y up
    EXPECT_EQ(j["synthesis_band_energy_of_unit_dirac"].size(), 8u);
    EXPECT_NEAR(j["direct_delay_s"].get<double>(), 0.03, 1e-12);

    // Nothing temporary is left behind.
    for (const auto& e : std::filesystem::directory_iterator(dir + "/ir/mono"))
        EXPECT_EQ(e.path().filename().string().find(".tmp"), std::string::npos) << e.path();
}

TEST(IrWriter, Pcm24OptionKeepsTheScale) {
    const std::string dir = hw::test::TempDir("ir_writer_pcm24");
    const hw::ImpulseResponse ir = SmallIr();
    hw::Diagnostics diag;
    const auto rel = hw::WriteImpulseResponseFiles(dir, ir, Info(), hw::WavFormat::kPcm24, diag);
    ASSERT_TRUE(rel) << diag.ToString();
    const auto wav = hw::ReadWav(dir + "/" + *rel, diag);
    ASSERT_TRUE(wav);
    ASSERT_EQ(wav->samples.size(), ir.samples.size());
    for (size_t i = 0; i < ir.samples.size(); ++i)
        EXPECT_NEAR(wav->samples[i], ir.samples[i], 1.0 / (1 << 23));  // one 24-bit step
    std::ifstream in(dir + "/" + *rel + ".json");
    EXPECT_EQ(nlohmann::json::parse(in)["sample_format"], "pcm24");
}

TEST(IrWriter, RefusesEmptyIrAndUnwritableDirectory) {
    hw::Diagnostics diag;
    hw::ImpulseResponse empty;
    EXPECT_FALSE(hw::WriteImpulseResponseFiles(hw::test::TempDir("ir_writer_empty"), empty, Info(),
                                               hw::WavFormat::kFloat32, diag));
    EXPECT_TRUE(diag.HasErrors());
    const std::string file = hw::test::WriteFile(hw::test::TempDir("ir_writer_blocked"), "ir", "x");
    hw::Diagnostics diag2;
    EXPECT_FALSE(hw::WriteImpulseResponseFiles(std::filesystem::path(file).parent_path().string(), SmallIr(),
                                               Info(), hw::WavFormat::kFloat32, diag2));
    EXPECT_NE(diag2.ToString().find("directory"), std::string::npos) << diag2.ToString();
}

TEST(IrWriter, LayoutsHaveTheirOwnDirectories) {
    EXPECT_EQ(hw::ImpulseResponseRelativePath("ambix-acn-sn3d", "s", "r"), "ir/ambix/s__r.wav");
    EXPECT_EQ(hw::ImpulseResponseRelativePath("binaural-lr", "s", "r"), "ir/binaural/s__r.wav");
    EXPECT_EQ(hw::SafeFileComponent(".."), "_..");
}

// A binaural file's level follows its HRTF set (response.h), so its sidecar carries no G
// reference, only a note saying why; the up vector is written as given.
TEST(IrWriter, BinauralSidecarHasNoReferenceEnergy) {
    hw::ImpulseResponse ir = SmallIr();
    hw::IrFileInfo info = Info();
    info.up = hw::Vec3(0, -0.0, 1);  // z-up model: DirectionToModel(0, 1, 0) = (0, -0, 1)
    const nlohmann::json mono = nlohmann::json::parse(hw::ImpulseResponseSidecarJson(ir, info, hw::WavFormat::kFloat32));
    EXPECT_TRUE(mono.contains("reference_energy"));
    EXPECT_FALSE(mono.contains("reference_energy_note"));
    EXPECT_EQ(mono["up"], nlohmann::json::array({0.0, 0.0, 1.0}));
    EXPECT_FALSE(std::signbit(mono["up"][1].get<double>()));  // written as 0.0, not -0.0

    ir.layout = "binaural-lr";
    ir.channels = 2;
    ir.samples.resize(2 * ir.samples.size());
    const nlohmann::json bin = nlohmann::json::parse(hw::ImpulseResponseSidecarJson(ir, info, hw::WavFormat::kFloat32));
    EXPECT_FALSE(bin.contains("reference_energy"));
    EXPECT_FALSE(bin.contains("reference_energy_definition"));
    EXPECT_NE(bin["reference_energy_note"].get<std::string>().find("HRTF"), std::string::npos);
    hw::Diagnostics diag;
    auto read = hw::ParseIrSidecar(bin.dump(), "b.wav.json", diag);
    ASSERT_TRUE(read) << diag.ToString();
    EXPECT_FALSE(read->referenceEnergy);
    EXPECT_EQ(*read->layout, hw::ChannelLayout::kBinaural);
}
